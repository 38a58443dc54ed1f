// Messages between the workspace and its analysis worker (analysis.worker.ts): the command
// line's supply estimate, spread, parts list, SPICE export and voicing, run off the main thread.
import type { Design, PowerSupplySection } from '../dsp/circuit/design.ts';
import type { SpreadSummary } from '../dsp/analysis/spread.ts';
import type { VoicingTarget } from '../dsp/analysis/voicing.ts';

/** A clip for listening renders: mono, full scale = voltsAtFullScale at the circuit input. */
export interface ListenClip {
  readonly samples: Float32Array;
  readonly sampleRateHz: number;
  readonly voltsAtFullScale: number;
}

export type AnalysisRequest =
  | { readonly type: 'supply'; readonly id: number; readonly design: Design; readonly section: PowerSupplySection }
  | { readonly type: 'supply-hum'; readonly id: number; readonly design: Design; readonly section: PowerSupplySection; readonly clip: ListenClip | null }
  | { readonly type: 'spread'; readonly id: number; readonly design: Design; readonly runs: number; readonly seed: number }
  | { readonly type: 'spread-listen'; readonly id: number; readonly design: Design; readonly which: 'low' | 'nominal' | 'high'; readonly clip: ListenClip }
  | { readonly type: 'parts'; readonly id: number; readonly design: Design }
  | { readonly type: 'spice'; readonly id: number; readonly design: Design }
  | {
      readonly type: 'voicing';
      readonly id: number;
      readonly design: Design;
      readonly vary: readonly string[];
      readonly target: VoicingTarget;
      readonly series: 'E12' | 'E24';
    };

export interface SupplyReport {
  readonly unloadedVolts: number;
  readonly loadedVolts: number;
  readonly loadAmps: number;
  readonly ripplePeakToPeakVolts: number;
  readonly rippleHertz: number;
  readonly formulaRippleVolts: number;
  readonly modelSupply: Design['supply'];
  readonly heater: { readonly totalAmps: number; readonly windingAmps: number; readonly windingVolts: number; readonly pass: boolean } | null;
  readonly nodes: readonly { readonly label: string; readonly dcVolts: number; readonly ripplePeakToPeakVolts: number }[];
  readonly warnings: readonly string[];
}

export interface VoicingReport {
  readonly values: Readonly<Record<string, number>>;
  readonly cornerHz: number | null;
  readonly fitError: number;
  readonly fitErrorUnit: 'fraction' | 'dB rms';
  readonly hertz: readonly number[];
  readonly db: readonly number[];
  /** Output impedance of the stage that drives the network, ohms (the fit includes it). */
  readonly sourceOhms: number;
}

export type AnalysisResult =
  | { readonly type: 'supply'; readonly report: SupplyReport }
  | { readonly type: 'audio'; readonly wav: Uint8Array; readonly label: string }
  | { readonly type: 'spread'; readonly summary: SpreadSummary }
  | { readonly type: 'text'; readonly text: string; readonly fileName: string; readonly mime: string }
  | { readonly type: 'voicing'; readonly report: VoicingReport };

export type AnalysisReply =
  | { readonly type: 'progress'; readonly id: number; readonly fraction: number }
  | { readonly type: 'done'; readonly id: number; readonly result: AnalysisResult }
  | { readonly type: 'failed'; readonly id: number; readonly reason: string };
