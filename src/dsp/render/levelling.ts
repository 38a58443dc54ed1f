// Output levelling for renders: which output voltage maps to full scale.
import { CircuitEngine, type EngineCircuit } from '../circuit/engine.ts';
import type { Netlist } from '../circuit/netlist.ts';

/**
 * Drive a copy of the circuit with a 1 kHz sine at the input's full-scale voltage for 0.25 s
 * and return twice the output's peak deviation from its operating point (6 dB of headroom
 * under full scale). Deterministic, so a file and its re-render are levelled alike.
 */
export function estimateOutputVoltsAtFullScale(circuit: EngineCircuit | Netlist, sampleRateHz: number, inputVoltsPeak: number): number {
  const e = new CircuitEngine(circuit, sampleRateHz);
  const dc = e.operatingPoint().nodes[e.outputNodeName] ?? 0;
  const n = Math.round(0.25 * sampleRateHz);
  let peak = 0;
  for (let k = 0; k < n; k++) {
    const y = e.processSample(inputVoltsPeak * Math.sin((2 * Math.PI * 1000 * k) / sampleRateHz));
    if (k > n / 2) peak = Math.max(peak, Math.abs(y - dc));
  }
  return peak > 1e-9 ? 2 * peak : 1;
}
