// Guitar cabinet impulse responses from a small documented model (see impulses/README.md):
// closed-box speaker low end, Butterworth upper roll-off, cone break-up peaks, open-back
// rear-wave cancellation, microphone off-axis low-pass, direct delay and a floor reflection.

import { type Biquad, analogHighpass2, analogLowpass1, analogLowpass2, analogPeak, bilinear, biquadResponse, butterworthQs, runBiquad } from './biquad.ts';

/** Speed of sound in air at about 20 C (common practice). */
export const SPEED_OF_SOUND_METRES_PER_SECOND = 343;

export interface BreakupPeak {
  readonly centreHz: number;
  readonly gainDb: number;
  readonly q: number;
}

export interface CabinetParams {
  readonly name: string;
  readonly description: string;
  readonly speakerDiameterInches: number;
  /** Closed-box low end: second-order high-pass at fc with total Q (Thiele-Small closed box, from memory). */
  readonly coneResonanceHz: number;
  readonly coneResonanceQ: number;
  /** Upper roll-off: Butterworth low-pass of even order (6 dB/octave per order). */
  readonly upperRolloffHz: number;
  readonly upperRolloffOrder: number;
  readonly breakupPeaks: readonly BreakupPeak[];
  readonly back: 'closed' | 'open';
  /** Open back: extra path the rear wave travels to the mic, its gain, and its low-pass. */
  readonly rearPathMetres: number;
  readonly rearGain: number;
  readonly rearLowpassHz: number;
  /** Microphone: 'centre' faces the dust cap on axis, 'edge' faces the cone's edge. */
  readonly micPosition: 'centre' | 'edge';
  /** Off-axis low-pass (second-order, Q 0.707). */
  readonly micLowpassHz: number;
  readonly micDistanceMetres: number;
  /** Speaker centre and mic height above a reflecting floor. */
  readonly heightMetres: number;
  readonly floorReflectionCoefficient: number;
  readonly lengthSeconds: number;
}

function check(cond: boolean, message: string): void {
  if (!cond) throw new Error(message);
}

export function validateCabinet(p: CabinetParams, sampleRateHz: number): void {
  const nyq = sampleRateHz / 2;
  check(Number.isFinite(sampleRateHz) && sampleRateHz >= 16000, `sample rate must be at least 16000 Hz (got ${sampleRateHz})`);
  check(p.coneResonanceHz > 10 && p.coneResonanceHz < 500, `cabinet "${p.name}": cone resonance must be 10-500 Hz (got ${p.coneResonanceHz})`);
  check(p.coneResonanceQ > 0.3 && p.coneResonanceQ < 10, `cabinet "${p.name}": cone resonance Q must be 0.3-10 (got ${p.coneResonanceQ})`);
  check(
    p.upperRolloffHz > 500 && p.upperRolloffHz < 0.45 * sampleRateHz,
    `cabinet "${p.name}": upper roll-off must be from 500 Hz to 0.45 fs (got ${p.upperRolloffHz})`,
  );
  for (const b of p.breakupPeaks) {
    check(
      b.centreHz > 100 && b.centreHz < 0.45 * sampleRateHz && b.q > 0 && Number.isFinite(b.gainDb),
      `cabinet "${p.name}": bad break-up peak at ${b.centreHz} Hz`,
    );
  }
  check(p.micLowpassHz > 500 && p.micLowpassHz < nyq * 0.9, `cabinet "${p.name}": mic low-pass must be from 500 Hz to 0.45 fs (got ${p.micLowpassHz})`);
  check(p.micDistanceMetres > 0 && p.micDistanceMetres < 10, `cabinet "${p.name}": mic distance must be 0-10 m (got ${p.micDistanceMetres})`);
  check(p.heightMetres >= 0 && p.heightMetres < 5, `cabinet "${p.name}": height must be 0-5 m (got ${p.heightMetres})`);
  check(p.floorReflectionCoefficient >= 0 && p.floorReflectionCoefficient < 1, `cabinet "${p.name}": floor reflection must be in [0, 1)`);
  if (p.back === 'open') {
    check(p.rearPathMetres > 0 && p.rearPathMetres < 3, `cabinet "${p.name}": rear path must be 0-3 m (got ${p.rearPathMetres})`);
    check(p.rearGain >= 0 && p.rearGain < 1, `cabinet "${p.name}": rear gain must be in [0, 1) (got ${p.rearGain})`);
    check(p.rearLowpassHz > 20 && p.rearLowpassHz < nyq * 0.9, `cabinet "${p.name}": rear low-pass out of range (got ${p.rearLowpassHz})`);
  }
  check(p.lengthSeconds >= 0.02 && p.lengthSeconds <= 1, `cabinet "${p.name}": length must be 0.02-1 s (got ${p.lengthSeconds})`);
}

/** Speaker and mic filter sections in signal order (all LTI, so order does not change the result). */
export function cabinetSections(p: CabinetParams, sampleRateHz: number): Biquad[] {
  validateCabinet(p, sampleRateHz);
  const s: Biquad[] = [bilinear(analogHighpass2(p.coneResonanceHz, p.coneResonanceQ), sampleRateHz, p.coneResonanceHz)];
  for (const b of p.breakupPeaks) s.push(bilinear(analogPeak(b.centreHz, b.gainDb, b.q), sampleRateHz, b.centreHz));
  for (const q of butterworthQs(p.upperRolloffOrder)) {
    s.push(bilinear(analogLowpass2(p.upperRolloffHz, q), sampleRateHz, p.upperRolloffHz));
  }
  s.push(bilinear(analogLowpass2(p.micLowpassHz, Math.SQRT1_2), sampleRateHz, p.micLowpassHz));
  return s;
}

export function rearLowpass(p: CabinetParams, sampleRateHz: number): Biquad {
  return bilinear(analogLowpass1(p.rearLowpassHz), sampleRateHz, p.rearLowpassHz);
}

export interface CabinetPaths {
  /** Mic distance / c, rounded to whole samples. */
  readonly directDelaySamples: number;
  /** Floor bounce: extra path / c (whole samples) and gain (reflection coefficient x spreading). */
  readonly reflectionDelaySamples: number;
  readonly reflectionGain: number;
  /** Open back: rear wave extra delay (whole samples) and gain; 0 gain when closed. */
  readonly rearDelaySamples: number;
  readonly rearGain: number;
}

export function cabinetPaths(p: CabinetParams, sampleRateHz: number): CabinetPaths {
  validateCabinet(p, sampleRateHz);
  const c = SPEED_OF_SOUND_METRES_PER_SECOND;
  const d = p.micDistanceMetres;
  // Image source below the floor: reflected path sqrt(d^2 + (2h)^2); 1/r spreading relative to the direct path.
  const reflected = Math.hypot(d, 2 * p.heightMetres);
  return {
    directDelaySamples: Math.round((d / c) * sampleRateHz),
    reflectionDelaySamples: Math.max(1, Math.round(((reflected - d) / c) * sampleRateHz)),
    reflectionGain: p.floorReflectionCoefficient * (d / reflected),
    rearDelaySamples: p.back === 'open' ? Math.max(1, Math.round((p.rearPathMetres / c) * sampleRateHz)) : 0,
    rearGain: p.back === 'open' ? p.rearGain : 0,
  };
}

function cmul(a: { re: number; im: number }, b: { re: number; im: number }): { re: number; im: number } {
  return { re: a.re * b.re - a.im * b.im, im: a.re * b.im + a.im * b.re };
}

function delay(samples: number, w: number): { re: number; im: number } {
  return { re: Math.cos(w * samples), im: -Math.sin(w * samples) };
}

/**
 * Exact complex response of the (untruncated, unnormalised) model at frequencyHz:
 * e^{-jwDd} (1 + r e^{-jwDr}) (1 - g e^{-jwDb} Hrear) prod H_sections.
 */
export function cabinetResponse(p: CabinetParams, sampleRateHz: number, frequencyHz: number): { re: number; im: number } {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  const paths = cabinetPaths(p, sampleRateHz);
  let h = delay(paths.directDelaySamples, w);
  for (const s of cabinetSections(p, sampleRateHz)) h = cmul(h, biquadResponse(s, frequencyHz, sampleRateHz));
  const refl = delay(paths.reflectionDelaySamples, w);
  h = cmul(h, { re: 1 + paths.reflectionGain * refl.re, im: paths.reflectionGain * refl.im });
  if (paths.rearGain > 0) {
    const rear = cmul(delay(paths.rearDelaySamples, w), biquadResponse(rearLowpass(p, sampleRateHz), frequencyHz, sampleRateHz));
    h = cmul(h, { re: 1 - paths.rearGain * rear.re, im: -paths.rearGain * rear.im });
  }
  return h;
}

export const CABINET_FADE_SECONDS = 0.01;

export interface CabinetImpulse {
  /** Unit-energy impulse response: sum of squares = 1. */
  readonly samples: Float64Array;
  /** Factor that took the raw model impulse response to unit energy. */
  readonly normalisationGain: number;
}

/** Renders the model's impulse response, truncated with a half-cosine fade and scaled to unit energy. */
export function cabinetImpulse(p: CabinetParams, sampleRateHz: number): CabinetImpulse {
  const paths = cabinetPaths(p, sampleRateHz);
  const n = Math.round(p.lengthSeconds * sampleRateHz);
  const h = new Float64Array(n);
  if (paths.directDelaySamples >= n) throw new Error(`cabinet "${p.name}": mic is too far for a ${p.lengthSeconds} s response`);
  h[paths.directDelaySamples] = 1;
  for (const s of cabinetSections(p, sampleRateHz)) runBiquad(s, h, h);
  if (paths.rearGain > 0) {
    const rear = runBiquad(rearLowpass(p, sampleRateHz), h, new Float64Array(n));
    for (let i = n - 1; i >= paths.rearDelaySamples; i--) h[i] = (h[i] as number) - paths.rearGain * (rear[i - paths.rearDelaySamples] as number);
  }
  for (let i = n - 1; i >= paths.reflectionDelaySamples; i--) {
    h[i] = (h[i] as number) + paths.reflectionGain * (h[i - paths.reflectionDelaySamples] as number);
  }
  const fade = Math.min(n, Math.round(CABINET_FADE_SECONDS * sampleRateHz));
  for (let i = 0; i < fade; i++) {
    const k = n - fade + i;
    h[k] = (h[k] as number) * (0.5 + 0.5 * Math.cos((Math.PI * (i + 1)) / fade));
  }
  let energy = 0;
  for (let i = 0; i < n; i++) energy += (h[i] as number) ** 2;
  if (!(energy > 0) || !Number.isFinite(energy)) throw new Error(`cabinet "${p.name}": impulse response is silent or not finite`);
  const g = 1 / Math.sqrt(energy);
  for (let i = 0; i < n; i++) h[i] = (h[i] as number) * g;
  return { samples: h, normalisationGain: g };
}

const TWELVE_A_PEAKS: readonly BreakupPeak[] = [
  { centreHz: 1900, gainDb: 3, q: 2.5 },
  { centreHz: 3100, gainDb: 5, q: 3.5 },
  { centreHz: 4300, gainDb: 3, q: 5 },
];

const SEALED_12_BASE = {
  speakerDiameterInches: 12,
  coneResonanceHz: 92,
  coneResonanceQ: 1.5,
  upperRolloffHz: 5200,
  upperRolloffOrder: 6,
  breakupPeaks: TWELVE_A_PEAKS,
  back: 'closed',
  rearPathMetres: 0,
  rearGain: 0,
  rearLowpassHz: 1000,
  micDistanceMetres: 0.025,
  heightMetres: 0.35,
  floorReflectionCoefficient: 0.6,
  lengthSeconds: 0.15,
} as const;

export const CABINET_VARIANTS: readonly CabinetParams[] = [
  {
    ...SEALED_12_BASE,
    name: 'sealed-12-cap-close',
    description: 'Closed-back 12 in speaker, mic on axis at the dust cap, 25 mm away: tight low end, brightest.',
    micPosition: 'centre',
    micLowpassHz: 12000,
  },
  {
    ...SEALED_12_BASE,
    name: 'sealed-12-rim-close',
    description: 'Same closed-back 12 in speaker, mic facing the cone edge, 25 mm away: darker top.',
    micPosition: 'edge',
    micLowpassHz: 3200,
  },
  {
    name: 'open-12-cap-far',
    description: 'Open-back 12 in combo, mic on axis 0.9 m away: thinner low end, floor-bounce comb.',
    speakerDiameterInches: 12,
    coneResonanceHz: 85,
    coneResonanceQ: 1.2,
    upperRolloffHz: 5600,
    upperRolloffOrder: 4,
    breakupPeaks: [
      { centreHz: 2400, gainDb: 4, q: 3 },
      { centreHz: 3600, gainDb: 3, q: 4 },
    ],
    back: 'open',
    rearPathMetres: 0.3,
    rearGain: 0.8,
    rearLowpassHz: 600,
    micPosition: 'centre',
    micLowpassHz: 10000,
    micDistanceMetres: 0.9,
    heightMetres: 0.45,
    floorReflectionCoefficient: 0.6,
    lengthSeconds: 0.15,
  },
  {
    name: 'open-10-rim-mid',
    description: 'Open-back 10 in combo, mic at the cone edge 0.3 m away: higher cone resonance, lean and dark.',
    speakerDiameterInches: 10,
    coneResonanceHz: 115,
    coneResonanceQ: 1.1,
    upperRolloffHz: 6000,
    upperRolloffOrder: 4,
    breakupPeaks: [
      { centreHz: 2700, gainDb: 4, q: 3 },
      { centreHz: 4600, gainDb: 3, q: 4 },
    ],
    back: 'open',
    rearPathMetres: 0.25,
    rearGain: 0.8,
    rearLowpassHz: 700,
    micPosition: 'edge',
    micLowpassHz: 3600,
    micDistanceMetres: 0.3,
    heightMetres: 0.4,
    floorReflectionCoefficient: 0.6,
    lengthSeconds: 0.15,
  },
];

/** Peak frequency of the closed-box high-pass: fc / sqrt(1 - 1/(2 Q^2)) for Q > 1/sqrt(2) (handbook second-order formula). */
export function highpassPeakHz(cornerHz: number, q: number): number {
  if (q <= Math.SQRT1_2) throw new Error(`a second-order high-pass has no peak for Q <= 0.707 (got ${q})`);
  return cornerHz / Math.sqrt(1 - 1 / (2 * q * q));
}
