// Junction limiting for the exponential tails of the tube laws, in the manner of SPICE's pnjlim
// (Nagel, "SPICE2: a computer program to simulate semiconductor circuits", UCB ERL-M520, 1975:
// a Newton step that raises a diode's voltage far into forward bias is replaced by one that
// raises its *exponent* logarithmically; cited from memory).
//
// The netlist-v1 laws are exponential only below their knee and power laws above it:
//   grid current (dempwolf-zolzer)   Ig ~ (softplus(cg Vgk))^xi     tail ~ exp(xi cg Vgk)
//   grid current (initial-velocity)  Ig ~ exp((Vgk - onset) / Vt) below the onset, a power above
//   plate current  Ip ~ (softplus(z))^ex, z = kp (1/mu + Vgk / s)   tail ~ exp(ex z)
// with s = sqrt(kvb + Vpk^2) (triode) or s = Vsk (pentode). Newton linearises the law at the
// present iterate; from deep in a tail the slope is exponentially small and the step can land
// far past the knee, where the power law then gives a current out of all proportion. The
// limiter works on the exponent a (a = xi cg Vgk, or a = ex z, in units of the tail's e-fold):
//   a step that raises a by more than 2, from below the knee's linear part (a < 2) to above the
//   knee (a > 0), is shortened to  base + ln(1 + a_new - base),  base = max(a_old, 0).
// Above a = 2 the law is a power law: no limit (the residual-norm backtracking in NewtonRoot
// guards that region). Steps that stay in the tail are not limited: there the device carries
// almost no current and the linear network alone sets the step, which is then exact.
//
// Each limiter shortens the whole Newton step (one scale factor for all ports, so the step
// keeps its direction and the backtracking's descent test stays meaningful).

/** Shortens a proposed Newton step. */
export interface StepLimiter {
  /**
   * v: the present iterate, delta: the full Newton step (both indexed by root port), s[0]: the
   * fraction of delta about to be taken, lowered in place (never raised). Through an array, not a
   * number argument and result: V8 boxes a double that crosses a call it does not inline, and
   * this call is polymorphic (see DEVELOPERS.md, "Allocation on the audio path").
   */
  limit(v: Float64Array, delta: Float64Array, s: Float64Array): void;
}

/** Exponent units a step may rise by before it is compressed (pnjlim's 2 V_t). */
const FREE_RISE = 2;
/** Above this exponent the law is a power law (softplus(2) is within 6 % of 2). */
const POWER_LAW_FROM = 2;

/**
 * The limited exponent for a step from a[0] to a[1] (see the file comment), into a[1]. Through
 * an array: a double passed to or returned from a call V8 does not inline is boxed (an
 * allocation per call; DEVELOPERS.md, "Allocation on the audio path").
 */
export function limitExponent(a: Float64Array): void {
  const aOld = a[0]!,
    aNew = a[1]!;
  if (aNew > aOld + FREE_RISE && aOld < POWER_LAW_FROM && aNew > 0) {
    const base = Math.max(aOld, 0);
    a[1] = base + Math.log(1 + (aNew - base));
  }
}

/**
 * A grid law on the grid port, exponent k·(Vgk - onset): Dempwolf-Zölzer k = xi·cg, onset 0;
 * initial-velocity k = 1/Vt, onset its onsetVolts.
 */
export class GridLawLimiter implements StepLimiter {
  private readonly a = new Float64Array(2);
  /**
   * @param gridPort root port of Vgk
   * @param k exponent units per volt
   * @param onsetVolts where the exponential tail meets the power law
   */
  constructor(
    private readonly gridPort: number,
    private readonly k: number,
    private readonly onsetVolts = 0,
  ) {}

  limit(v: Float64Array, delta: Float64Array, s: Float64Array): void {
    const g = this.gridPort,
      k = this.k,
      scale = s[0]!;
    const dv = scale * delta[g]!;
    if (k * dv > FREE_RISE) {
      const aOld = k * (v[g]! - this.onsetVolts),
        aNew = aOld + k * dv;
      const a = this.a;
      a[0] = aOld;
      a[1] = aNew;
      limitExponent(a);
      const aLim = a[1]!;
      if (aLim < aNew) s[0] = (scale * (aLim - aOld)) / (aNew - aOld);
    }
  }
}

/**
 * Koren plate law, triode (s = sqrt(kvb + Vpk^2)) or pentode (s = Vsk): exponent ex·z. The step
 * is shortened through Vgk: the limited exponent, at the step's new plate (screen) voltage,
 * gives the grid voltage to stop at.
 */
export class PlateLawLimiter implements StepLimiter {
  private readonly a = new Float64Array(2);
  /**
   * @param gridPort root port of Vgk; sPort the plate port (triode) or the screen port (pentode)
   * @param pentode s = Vsk instead of sqrt(kvb + Vpk^2)
   */
  constructor(
    private readonly gridPort: number,
    private readonly sPort: number,
    private readonly pentode: boolean,
    private readonly kp: number,
    private readonly mu: number,
    private readonly kvb: number,
    private readonly ex: number,
  ) {}

  limit(v: Float64Array, delta: Float64Array, s: Float64Array): void {
    const g = this.gridPort,
      sp = this.sPort,
      kp = this.kp,
      ex = this.ex,
      scale = s[0]!;
    const dg = scale * delta[g]!;
    if (!(dg > 0)) return;
    const vs = v[sp]!,
      vsNew = vs + scale * delta[sp]!;
    const sOld = this.pentode ? vs : Math.sqrt(this.kvb + vs * vs),
      sNew = this.pentode ? vsNew : Math.sqrt(this.kvb + vsNew * vsNew);
    if (!(sNew > 0) || !(sOld > 0)) return;
    const vgOld = v[g]!,
      vgNew = vgOld + dg;
    const aOld = ex * kp * (1 / this.mu + vgOld / sOld),
      aNew = ex * kp * (1 / this.mu + vgNew / sNew);
    const a = this.a;
    a[0] = aOld;
    a[1] = aNew;
    limitExponent(a);
    const aLim = a[1]!;
    if (!(aLim < aNew)) return;
    // the grid voltage at which the exponent is aLim at the new s
    const vgLim = (aLim / (ex * kp) - 1 / this.mu) * sNew;
    if (vgLim > vgOld && vgLim < vgNew) s[0] = (scale * (vgLim - vgOld)) / dg;
  }
}
