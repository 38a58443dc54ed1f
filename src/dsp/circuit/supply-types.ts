// The power-supply section's data types: part of the design (design.ts), estimated by
// analysis/supply.ts. Types only.

export type RectifierTopology = 'bridge' | 'full-wave-ct' | 'half-wave';

export type RectifierSpec =
  | {
      readonly topology: RectifierTopology;
      readonly diode: 'silicon';
      /** Forward drop per diode, volts; default 1.0 (0.7-1 V, common practice). */
      readonly dropVolts?: number;
    }
  | {
      readonly topology: RectifierTopology;
      readonly diode: 'tube';
      /** Drop of one conducting rectifier section, volts, as stated by the data sheet at your current. */
      readonly dropVolts: number;
    };

export interface SecondarySpec {
  /**
   * Rated RMS voltage at rated current. For 'full-wave-ct' this is each half
   * (the "250" in 250-0-250).
   */
  readonly rmsVolts: number;
  /** Rated RMS winding current, amperes (per half for 'full-wave-ct'). */
  readonly ratedAmps: number;
  /** Unloaded rise above rating as a fraction; default 0.07 (5-10 %, common practice, tube amplifier design references). */
  readonly regulationFraction?: number;
  /**
   * Secondary-referred winding resistance, ohms (per half for 'full-wave-ct').
   * Default: regulationFraction × rmsVolts / ratedAmps.
   */
  readonly windingOhms?: number;
}
