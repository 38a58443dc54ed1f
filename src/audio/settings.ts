// The workspace's audio settings, held once: the engine writes every setting it sends here, the
// workspace's port reads them (and sets them before the engine exists), and an offline render
// or a new processor starts from the messages that make them.
import { DEFAULT_INPUT_VOLTS_AT_FULL_SCALE, type Design } from '../dsp/circuit/design.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import { DEFAULT_LIVE_FACTOR } from '../dsp/realtime/dual-slot-engine.ts';
import type { Monitor, Slot, ToProcessor } from '../dsp/realtime/messages.ts';

export class AudioSettings {
  factor: OversamplingFactor = DEFAULT_LIVE_FACTOR;
  /** The designs sent to the processor (with every edit applied). */
  designs: Partial<Record<Slot, Design>> = {};
  inputVolts = DEFAULT_INPUT_VOLTS_AT_FULL_SCALE;
  outputScale: Partial<Record<Slot, number>> = {};
  levelDb = 0;
  limiter = true;
  monitor: Monitor = 'A';
  /** The output mute chosen through setMuted (the processor's; the live input has its own). */
  outputMuted = false;
  /** Live A/B loudness match (B follows A by its measured loudness; off as in the processor). Not replayed offline: a render levels each slot by its own scale. */
  loudnessMatch = false;

  /** The messages that bring a fresh processor to these settings (designs without plans: offline renders only). */
  messages(): ToProcessor[] {
    const out: ToProcessor[] = [{ type: 'set-quality', factor: this.factor }];
    for (const slot of ['A', 'B'] as const) {
      const d = this.designs[slot];
      if (d) out.push({ type: 'load-design', slot, design: d });
      const v = this.outputScale[slot];
      if (v !== undefined) out.push({ type: 'set-output-scale', slot, voltsAtFullScale: v });
    }
    out.push(
      { type: 'set-input-calibration', voltsAtFullScale: this.inputVolts },
      { type: 'set-output-level', db: this.levelDb },
      { type: 'set-limiter', enabled: this.limiter },
      { type: 'monitor', target: this.monitor },
    );
    return out;
  }
}
