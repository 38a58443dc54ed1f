// Frequency responses for the plots: whole circuit at its operating point, and the tone network.
import { designCircuit, type Design } from '../../dsp/circuit/design.ts';
import type { OperatingPoint } from '../../dsp/circuit/engine.ts';
import { acAnalysis, identifyToneNetwork, logFrequencies, toneNetworkAc } from '../../dsp/analysis/ac.ts';

export interface Curve { readonly hertz: readonly number[]; readonly db: readonly number[] }
export interface Responses { readonly whole: Curve | null; readonly tone: Curve | null; readonly toneParts: readonly string[]; readonly reason: string | null }

export const RESPONSE_POINTS = 121;

export function designResponses(d: Design, op: OperatingPoint | null): Responses {
  const f = logFrequencies(20, 20000, RESPONSE_POINTS);
  const c = designCircuit(d);
  let whole: Curve | null = null, tone: Curve | null = null, toneParts: string[] = [];
  const reasons: string[] = [];
  try {
    const r = acAnalysis(c, { ...(op ? { op } : {}), frequenciesHz: f });
    whole = { hertz: r.frequenciesHz, db: r.magnitudeDb };
  } catch (err) { reasons.push(`whole circuit: ${(err as Error).message}`); }
  try {
    const net = identifyToneNetwork(c);
    if (net) {
      const r = toneNetworkAc(c, net, { frequenciesHz: f });
      tone = { hertz: r.frequenciesHz, db: r.magnitudeDb };
      toneParts = [...net.partIds];
    } else reasons.push('no passive tone network between a plate coupling capacitor and the output');
  } catch (err) { reasons.push(`tone network: ${(err as Error).message}`); }
  return { whole, tone, toneParts, reason: reasons.length ? reasons.join('; ') : null };
}
