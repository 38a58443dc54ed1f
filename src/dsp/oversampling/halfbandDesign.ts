// Half-band filter design, done in code at construction (no pasted coefficient tables).
//
// Frequencies here are normalised to the filter's own (high) sample rate, cycles/sample.
// A half-band lowpass has its passband edge fp and stopband edge fs symmetric about 1/4:
// fp + fs = 1/2. transitionWidth = fs - fp.

/** Two-path allpass (polyphase IIR) half-band: H(z) = ½·[A0(z²) + z⁻¹·A1(z²)], each A a
 * chain of first-order sections (a + z⁻²)/(1 + a·z⁻²). */
export interface EllipticHalfbandDesign {
  readonly kind: 'iir';
  /** Filter order (odd); number of allpass coefficients is (order - 1) / 2. */
  readonly order: number;
  readonly transitionWidth: number;
  readonly path0Coefficients: readonly number[];
  readonly path1Coefficients: readonly number[];
  /** Stopband attenuation the elliptic design formula promises for this order. */
  readonly predictedAttenuationDb: number;
}

/** Linear-phase FIR half-band of length 4·M - 1 (odd taps sinc, even taps zero, centre ½). */
export interface KaiserHalfbandDesign {
  readonly kind: 'fir';
  /** Full impulse response, length 4·M - 1, symmetric, centre tap 0.5. */
  readonly taps: readonly number[];
  readonly transitionWidth: number;
  readonly kaiserBeta: number;
  /** Length N from Kaiser's formula (not rounded); the design is at least this long. */
  readonly kaiserLengthEstimate: number;
  /** Worst stopband attenuation of the final taps, evaluated on a dense frequency grid
   * (at least the attenuation asked for). */
  readonly predictedAttenuationDb: number;
}

export type HalfbandDesign = EllipticHalfbandDesign | KaiserHalfbandDesign;

function checkSpec(who: string, transitionWidth: number, attenuationDb: number): void {
  if (!Number.isFinite(transitionWidth) || transitionWidth <= 0 || transitionWidth >= 0.5) {
    throw new Error(`${who}: transitionWidth must be in (0, 0.5) cycles/sample, got ${transitionWidth}`);
  }
  if (!Number.isFinite(attenuationDb) || attenuationDb < 10 || attenuationDb > 200) {
    throw new Error(`${who}: attenuationDb must be in [10, 200] dB, got ${attenuationDb}`);
  }
}

/** Sum of a series until the term underflows; terms come from termAt(i). */
function sumSeries(termAt: (i: number) => number, firstIndex: number): number {
  let acc = 0;
  for (let i = firstIndex; i < 1000; i++) {
    const term = termAt(i);
    acc += term;
    if (Math.abs(term) < 1e-300) break;
  }
  return acc;
}

/**
 * Elliptic half-band as two allpass paths. Method: the classical elliptic (Cauer) half-band
 * design, whose allpass coefficients follow from the Jacobi elliptic functions evaluated by
 * their nome (q) series; Valenzuela & Constantinides, "Digital signal processing schemes for
 * efficient interpolation and decimation", IEE Proc. G 130(6), 1983 (formulas from memory,
 * checked by measurement in tests/oversampling.test.ts).
 *
 *   selectivity k = tan²(π·fp) with fp = 1/4 - transitionWidth/2 (fp + fs = ½),
 *   k' = √(1-k²), e = ½·(1-√k')/(1+√k'), nome q ≈ e + 2e⁵ + 15e⁹ + 150e¹³,
 *   stopband: δ²/(1-δ²) = 4·q^(n/2)  =>  n = ⌈ln(a²/16)/ln q⌉ made odd,
 *   pole i (i = 1…(n-1)/2):  w = 2·q^¼·Σ(-1)^m q^(m(m+1)) sin((2m+1)πi/n)
 *                                 / (1 + 2·Σ(-1)^m q^(m²) cos(2mπi/n)),
 *   x = √((1 - w²k)(1 - w²/k)) / (1 + w²),  coefficient = (1 - x)/(1 + x).
 */
export function designEllipticHalfband(transitionWidth: number, attenuationDb: number): EllipticHalfbandDesign {
  checkSpec('designEllipticHalfband', transitionWidth, attenuationDb);
  const kRoot = Math.tan((Math.PI / 4) * (1 - 2 * transitionWidth));
  const k = kRoot * kRoot;
  const kPrimeRoot = Math.pow(1 - k * k, 0.25);
  const e = (0.5 * (1 - kPrimeRoot)) / (1 + kPrimeRoot);
  const e4 = e ** 4;
  const q = e * (1 + e4 * (2 + e4 * (15 + 150 * e4)));

  const stopPower = Math.pow(10, -attenuationDb / 10);
  const a = stopPower / (1 - stopPower);
  let order = Math.ceil(Math.log((a * a) / 16) / Math.log(q));
  if (order % 2 === 0) order += 1;
  if (order < 3) order = 3;

  const coefficients: number[] = [];
  const count = (order - 1) / 2;
  for (let i = 1; i <= count; i++) {
    const num = sumSeries((m) => (m % 2 === 0 ? 1 : -1) * Math.pow(q, m * (m + 1)) * Math.sin(((2 * m + 1) * i * Math.PI) / order), 0);
    const den = sumSeries((m) => (m % 2 === 0 ? 1 : -1) * Math.pow(q, m * m) * Math.cos((2 * m * i * Math.PI) / order), 1);
    const w = (num * Math.pow(q, 0.25)) / (den + 0.5);
    const w2 = w * w;
    const x = Math.sqrt((1 - w2 * k) * (1 - w2 / k)) / (1 + w2);
    coefficients.push((1 - x) / (1 + x));
  }
  coefficients.sort((p, r) => p - r);
  for (const c of coefficients) {
    if (!(c > 0 && c < 1)) throw new Error(`designEllipticHalfband: design failed (coefficient ${c} outside (0, 1))`);
  }
  // Alternate the sorted coefficients between the two paths (smallest in path 0).
  const path0 = coefficients.filter((_, i) => i % 2 === 0);
  const path1 = coefficients.filter((_, i) => i % 2 === 1);
  const aAchieved = 4 * Math.pow(q, order / 2);
  const predictedAttenuationDb = -10 * Math.log10(aAchieved / (1 + aAchieved));
  return { kind: 'iir', order, transitionWidth, path0Coefficients: path0, path1Coefficients: path1, predictedAttenuationDb };
}

/** Modified Bessel function of the first kind, order 0, by its power series. */
export function besselI0(x: number): number {
  const half = x / 2;
  let term = 1;
  let sum = 1;
  for (let m = 1; m < 500; m++) {
    term *= (half / m) * (half / m);
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return sum;
}

/** Worst stopband magnitude of a symmetric half-band, from its zero-phase response
 * H(f) = h₀ + 2·Σ h_k·cos(2πfk) on a dense grid over [¼ + Δf/2, ½]. */
export function firStopbandPeak(taps: readonly number[], transitionWidth: number): number {
  const half = (taps.length - 1) / 2;
  const centre = taps[half] ?? 0;
  const start = 0.25 + transitionWidth / 2;
  const points = 4096;
  let worst = 0;
  for (let p = 0; p <= points; p++) {
    const f = start + ((0.5 - start) * p) / points;
    let h = centre;
    for (let k = 1; k <= half; k += 2) h += 2 * (taps[half + k] ?? 0) * Math.cos(2 * Math.PI * f * k);
    worst = Math.max(worst, Math.abs(h));
  }
  return worst;
}

function kaiserHalfbandTaps(M: number, beta: number): number[] {
  const half = 2 * M - 1; // taps run k = -half … half
  const i0Beta = besselI0(beta);
  const taps = new Array<number>(2 * half + 1).fill(0);
  let oddSum = 0;
  for (let k = -half; k <= half; k += 2) {
    const r = k / half;
    const window = besselI0(beta * Math.sqrt(Math.max(0, 1 - r * r))) / i0Beta;
    const value = ((0.5 * Math.sin((Math.PI * k) / 2)) / ((Math.PI * k) / 2)) * window;
    taps[k + half] = value;
    oddSum += value;
  }
  for (let k = -half; k <= half; k += 2) taps[k + half] = (taps[k + half] ?? 0) * (0.5 / oddSum);
  taps[half] = 0.5;
  return taps;
}

/**
 * Kaiser-window half-band (windowed ideal lowpass at 1/4). Kaiser's empirical formulas
 * (Kaiser 1974; Oppenheim & Schafer, Discrete-Time Signal Processing, §7.5.3, from memory):
 *   β = 0.1102·(A - 8.7) for A > 50,   N - 1 = (A - 7.95) / (14.36·Δf)   (Δf in cycles/sample).
 * N is rounded up to the half-band form 4·M - 1. The formula is only an estimate (it falls
 * a few dB short for short, wide-transition filters), so A is raised in 0.5 dB steps until
 * the stopband peak evaluated on a dense grid meets δ = 10^(-A/20). The odd taps are renormalised to sum to exactly ½ so that DC
 * gain is 1 and a DC input gives no image at the old Nyquist.
 */
export function designKaiserHalfband(transitionWidth: number, attenuationDb: number): KaiserHalfbandDesign {
  checkSpec('designKaiserHalfband', transitionWidth, attenuationDb);
  const delta = Math.pow(10, -attenuationDb / 20);
  const kaiserLength = (attenuationDb - 7.95) / (14.36 * transitionWidth) + 1;
  // Ask the formulas for a little more (A' = A, A + 0.5, …) until the result meets A.
  for (let extraDb = 0; extraDb <= 40; extraDb += 0.5) {
    const A = attenuationDb + extraDb;
    const beta = A > 50 ? 0.1102 * (A - 8.7) : A >= 21 ? 0.5842 * Math.pow(A - 21, 0.4) + 0.07886 * (A - 21) : 0;
    const M = Math.max(1, Math.ceil(((A - 7.95) / (14.36 * transitionWidth) + 2) / 4));
    const taps = kaiserHalfbandTaps(M, beta);
    const peak = firStopbandPeak(taps, transitionWidth);
    if (peak <= delta) {
      return { kind: 'fir', taps, transitionWidth, kaiserBeta: beta, kaiserLengthEstimate: kaiserLength, predictedAttenuationDb: -20 * Math.log10(peak) };
    }
  }
  throw new Error(`designKaiserHalfband: Kaiser window cannot reach ${attenuationDb} dB with transition ${transitionWidth}`);
}
