// Magnetic pickup: where it senses the string (a comb filter) and its electrical load
// (series R-L source into the winding + cable capacitance parallel with the amp's input
// resistance), a second-order resonant low-pass discretised by the bilinear transform.

import { type AnalogBiquad, type Biquad, bilinear } from './biquad.ts';

export interface PickupParams {
  readonly label: string;
  /** Coil inductance, typically 1-10 H (pickup and DI level measurements, common practice, guitar signals). */
  readonly inductanceHenries: number;
  /** Winding self-capacitance, typically 80-200 pF (same source). */
  readonly windingCapacitanceFarads: number;
  /** Cable capacitance, typically 300-1000 pF (same source). */
  readonly cableCapacitanceFarads: number;
  /** DC resistance of the winding, about 6-15 k (from memory). */
  readonly windingResistanceOhms: number;
  /** Input resistance of what the guitar plugs into, 1 M for a tube grid input (common practice). */
  readonly loadResistanceOhms: number;
  /** Pole piece distance from the bridge saddle. */
  readonly distanceFromBridgeMetres: number;
}

/** A single-coil-like bridge pickup into 600 pF of cable (values chosen inside the pickup and DI level measurements, common practice ranges). */
export const SINGLE_COIL_BRIDGE: PickupParams = {
  label: 'single coil, bridge',
  inductanceHenries: 2.6,
  windingCapacitanceFarads: 110e-12,
  cableCapacitanceFarads: 600e-12,
  windingResistanceOhms: 6_200,
  loadResistanceOhms: 1_000_000,
  distanceFromBridgeMetres: 0.042,
};

/** A single-coil-like neck pickup. */
export const SINGLE_COIL_NECK: PickupParams = {
  label: 'single coil, neck',
  inductanceHenries: 2.4,
  windingCapacitanceFarads: 100e-12,
  cableCapacitanceFarads: 600e-12,
  windingResistanceOhms: 5_900,
  loadResistanceOhms: 1_000_000,
  distanceFromBridgeMetres: 0.16,
};

/** A two-coil (hum-cancelling) bridge pickup: more inductance, lower resonance. */
export const TWIN_COIL_BRIDGE: PickupParams = {
  label: 'twin coil, bridge',
  inductanceHenries: 4.4,
  windingCapacitanceFarads: 150e-12,
  cableCapacitanceFarads: 470e-12,
  windingResistanceOhms: 8_500,
  loadResistanceOhms: 1_000_000,
  distanceFromBridgeMetres: 0.038,
};

export function validatePickup(p: PickupParams): void {
  const positive: Array<[number, string]> = [
    [p.inductanceHenries, 'pickup inductance (H)'],
    [p.windingCapacitanceFarads, 'winding capacitance (F)'],
    [p.cableCapacitanceFarads, 'cable capacitance (F)'],
    [p.windingResistanceOhms, 'winding resistance (ohms)'],
    [p.loadResistanceOhms, 'load resistance (ohms)'],
    [p.distanceFromBridgeMetres, 'pickup distance from bridge (m)'],
  ];
  for (const [v, what] of positive) {
    if (!Number.isFinite(v) || v <= 0) throw new Error(`${what} must be a finite number above 0 (got ${String(v)})`);
  }
  if (p.inductanceHenries > 100) throw new Error(`pickup inductance ${p.inductanceHenries} H is implausible (expect 1-10 H)`);
  if (p.windingCapacitanceFarads + p.cableCapacitanceFarads > 1e-6) {
    throw new Error('pickup capacitances look like they are in pF, not F (total above 1 uF)');
  }
}

export function totalCapacitanceFarads(p: PickupParams): number {
  return p.windingCapacitanceFarads + p.cableCapacitanceFarads;
}

/** Undamped resonance 1 / (2 pi sqrt(L C)). */
export function pickupResonanceHz(p: PickupParams): number {
  return 1 / (2 * Math.PI * Math.sqrt(p.inductanceHenries * totalCapacitanceFarads(p)));
}

/**
 * Vout/Vemf = 1 / (L C s^2 + (L/Rl + R C) s + 1 + R/Rl): node analysis of the series R-L
 * source driving C parallel with Rl.
 */
export function pickupAnalog(p: PickupParams): AnalogBiquad {
  validatePickup(p);
  const l = p.inductanceHenries;
  const c = totalCapacitanceFarads(p);
  const r = p.windingResistanceOhms;
  const rl = p.loadResistanceOhms;
  return { n2: 0, n1: 0, n0: 1, d2: l * c, d1: l / rl + r * c, d0: 1 + r / rl };
}

/** Digital load filter, prewarped at the resonance so the peak lands where the analog one does. */
export function pickupLoadFilter(p: PickupParams, sampleRateHz: number): Biquad {
  const f0 = pickupResonanceHz(p);
  if (f0 >= 0.45 * sampleRateHz) {
    throw new Error(`pickup resonance ${f0.toFixed(0)} Hz is too close to Nyquist at ${sampleRateHz} Hz`);
  }
  return bilinear(pickupAnalog(p), sampleRateHz, f0);
}

/**
 * Pickup comb delay in samples. Sensing at distance d from a reflecting bridge adds the wave
 * and its inverted reflection 2d/c later: H = 1 - z^-D, D = fs 2d / c. The wave speed follows
 * from f = c / (2 L) (Mersenne/Taylor, handbook), c = 2 L_scale f_open, so D does not change
 * with the fret, only with the string.
 */
export function pickupCombDelaySamples(p: PickupParams, scaleLengthMetres: number, openStringHz: number, sampleRateHz: number): number {
  if (!Number.isFinite(scaleLengthMetres) || scaleLengthMetres <= p.distanceFromBridgeMetres) {
    throw new Error(`scale length ${scaleLengthMetres} m must exceed the pickup distance ${p.distanceFromBridgeMetres} m`);
  }
  if (!Number.isFinite(openStringHz) || openStringHz <= 0) throw new Error(`open string frequency must be above 0 Hz (got ${openStringHz})`);
  return (sampleRateHz * p.distanceFromBridgeMetres) / (scaleLengthMetres * openStringHz);
}

/** y[n] = x[n] - x[n - D] with linear interpolation for the fraction of D. */
export function applyPickupComb(input: Float64Array, delaySamples: number, out: Float64Array): Float64Array {
  if (!Number.isFinite(delaySamples) || delaySamples < 0) throw new Error(`comb delay must be 0 or more samples (got ${delaySamples})`);
  if (out.length < input.length) throw new Error('comb output buffer is shorter than its input');
  if (out === input) throw new Error('comb cannot run in place');
  const k = Math.floor(delaySamples);
  const frac = delaySamples - k;
  for (let n = 0; n < input.length; n++) {
    const a = n - k >= 0 ? (input[n - k] as number) : 0;
    const b = n - k - 1 >= 0 ? (input[n - k - 1] as number) : 0;
    out[n] = (input[n] as number) - ((1 - frac) * a + frac * b);
  }
  return out;
}
