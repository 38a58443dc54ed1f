// Frequency responses for the plots: whole circuit at its operating point, and the tone network.
import { designCircuit, type Design } from '../../dsp/circuit/design.ts';
import type { OperatingPoint } from '../../dsp/circuit/engine.ts';
import { acAnalysis, identifyToneNetwork, logFrequencies, toneNetworkAc, toneNetworkInCircuit } from '../../dsp/analysis/ac.ts';
import { toneControlEnds, type ToneControlEnds } from '../../dsp/analysis/voicing.ts';

export interface Curve {
  readonly hertz: readonly number[];
  readonly db: readonly number[];
}
export interface Responses {
  readonly whole: Curve | null;
  /** The tone network as the circuit drives it (from the driving stage's output impedance) and loads it. */
  readonly tone: Curve | null;
  /** The same network from an ideal source (0 ohms), for comparison. */
  readonly toneIdeal: Curve | null;
  readonly toneSourceOhms: number | null;
  /** Corner frequencies at both ends of the tone control, where there is one. */
  readonly toneEnds: ToneControlEnds | null;
  readonly toneParts: readonly string[];
  readonly reason: string | null;
}

export const RESPONSE_POINTS = 121;

export function designResponses(d: Design, op: OperatingPoint | null): Responses {
  const f = logFrequencies(20, 20000, RESPONSE_POINTS);
  const c = designCircuit(d);
  let whole: Curve | null = null,
    tone: Curve | null = null,
    toneIdeal: Curve | null = null,
    toneSourceOhms: number | null = null,
    toneEnds: ToneControlEnds | null = null,
    toneParts: string[] = [];
  const reasons: string[] = [];
  try {
    const r = acAnalysis(c, { ...(op ? { op } : {}), frequenciesHz: f });
    whole = { hertz: r.frequenciesHz, db: r.magnitudeDb };
  } catch (err) {
    reasons.push(`whole circuit: ${(err as Error).message}`);
  }
  try {
    const net = identifyToneNetwork(c);
    if (net) {
      const r = toneNetworkAc(c, net, { frequenciesHz: f });
      toneIdeal = { hertz: r.frequenciesHz, db: r.magnitudeDb };
      toneParts = [...net.partIds];
      if (op) {
        const driven = toneNetworkInCircuit(c, op, net, f);
        tone = { hertz: driven.response.frequenciesHz, db: driven.response.magnitudeDb };
        toneSourceOhms = driven.sourceOhms;
        toneEnds = toneControlEnds(d, op);
      } else {
        tone = toneIdeal;
        reasons.push('no operating point: the tone network is shown from an ideal source');
      }
    } else reasons.push('no passive tone network between a plate coupling capacitor and the output');
  } catch (err) {
    reasons.push(`tone network: ${(err as Error).message}`);
  }
  return { whole, tone, toneIdeal, toneSourceOhms, toneEnds, toneParts, reason: reasons.length ? reasons.join('; ') : null };
}
