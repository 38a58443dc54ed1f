// Tube library: model parameters and maximum ratings, each with where it came from.
// "confirmed" = read in a stored copy of the source; "from memory" = not confirmed.
import type { GridCurrentParams, KorenPentodeParams, KorenTriodeParams } from './models.ts';

export interface TubeRatings {
  readonly plateVolts: number;
  readonly plateWatts: number;
  readonly screenVolts?: number;
  readonly screenWatts?: number;
  readonly cathodeAmps?: number;
  /** Heater-cathode voltage magnitude limit. */
  readonly heaterCathodeVolts: number;
  readonly heaterVolts: number;
  readonly heaterAmps: number;
  /** Largest recommended control-grid circuit resistance (cathode bias). */
  readonly gridCircuitOhms: number;
  readonly source: string;
}

/**
 * Direct interelectrode capacitances of one section, farads. A pentode's "grid-cathode" is its
 * input capacitance (g1 to all other electrodes) and "plate-cathode" its output capacitance;
 * the model places both to the cathode (the screen and suppressor are AC-grounded in use).
 * They set the Miller roll-off of a stage and the rise time of a clipped plate, so they are
 * part of every design's model (design.ts).
 */
export interface InterelectrodeCapacitance {
  readonly gridPlateFarads: number;
  readonly gridCathodeFarads: number;
  readonly plateCathodeFarads: number;
  readonly source: string;
}

interface TubeTypeBase {
  readonly name: string;
  readonly capacitance: InterelectrodeCapacitance;
  readonly description: string;
  readonly gridCurrent: GridCurrentParams;
  readonly ratings: TubeRatings;
  readonly modelSource: string;
  readonly gridSource: string;
}

export interface TriodeType extends TubeTypeBase {
  readonly kind: 'triode';
  readonly model: KorenTriodeParams;
}

export interface PentodeType extends TubeTypeBase {
  readonly kind: 'pentode';
  readonly model: KorenPentodeParams;
}

export type TubeType = TriodeType | PentodeType;

/** Dempwolf-Zolzer DAFx-11 12AX7 grid-current fit (confirmed in code that cites the paper). */
export const DZ_12AX7_GRID: GridCurrentParams = { gg: 6.177e-4, cg: 9.901, xi: 1.314, ig0: 8.025e-8 };

const KOREN = 'Koren 1996 triode set (confirmed, secondary copy of Koren\'s library)';
const DZ_BORROWED = 'Dempwolf-Zolzer 12AX7 grid law applied to this type (approximation: no published fit for this type)';

export const TUBE_LIBRARY: Readonly<Record<string, TubeType>> = {
  '12AX7': {
    name: '12AX7', kind: 'triode', description: 'High-mu twin triode (ECC83), mu 100',
    capacitance: { gridPlateFarads: 1.7e-12, gridCathodeFarads: 1.6e-12, plateCathodeFarads: 0.46e-12, source: 'RCA 12AX7 sheet, unit 1, without shield (from memory, not confirmed)' },
    model: { mu: 100, ex: 1.4, kg1: 1060, kp: 600, kvb: 300 },
    gridCurrent: DZ_12AX7_GRID,
    modelSource: KOREN,
    gridSource: 'Dempwolf & Zolzer, DAFx-11 (confirmed in code that cites it)',
    ratings: {
      plateVolts: 300, plateWatts: 1.0, heaterCathodeVolts: 180, heaterVolts: 6.3, heaterAmps: 0.3,
      gridCircuitOhms: 2.2e6,
      source: 'RCA/Sylvania 12AX7 sheet: Va, Pa, Vhk, heater confirmed; grid-circuit resistance from memory',
    },
  },
  '12AT7': {
    name: '12AT7', kind: 'triode', description: 'Medium-mu twin triode (ECC81), mu 60',
    capacitance: { gridPlateFarads: 1.5e-12, gridCathodeFarads: 2.2e-12, plateCathodeFarads: 0.5e-12, source: 'RCA 12AT7 sheet, unit 1, without shield (from memory, not confirmed)' },
    model: { mu: 60, ex: 1.35, kg1: 460, kp: 300, kvb: 300 },
    gridCurrent: DZ_12AX7_GRID,
    modelSource: KOREN, gridSource: DZ_BORROWED,
    ratings: {
      plateVolts: 300, plateWatts: 2.5, cathodeAmps: 0.015, heaterCathodeVolts: 90, heaterVolts: 6.3, heaterAmps: 0.3,
      gridCircuitOhms: 1e6,
      source: 'ECC81 sheet: Va, Pa, Vhk, Ik confirmed; heater and grid-circuit resistance from memory',
    },
  },
  '12AU7': {
    name: '12AU7', kind: 'triode', description: 'Low-mu twin triode (ECC82), mu about 20',
    capacitance: { gridPlateFarads: 1.5e-12, gridCathodeFarads: 1.6e-12, plateCathodeFarads: 0.5e-12, source: 'RCA 12AU7 sheet, unit 1, without shield (from memory, not confirmed)' },
    model: { mu: 21.5, ex: 1.3, kg1: 1180, kp: 84, kvb: 300 },
    gridCurrent: DZ_12AX7_GRID,
    modelSource: KOREN, gridSource: DZ_BORROWED,
    ratings: {
      plateVolts: 300, plateWatts: 2.75, cathodeAmps: 0.02, heaterCathodeVolts: 200, heaterVolts: 6.3, heaterAmps: 0.3,
      gridCircuitOhms: 1e6,
      source: 'ECC82 sheet: Va, Pa, Ik confirmed; Vhk, heater and grid-circuit resistance from memory',
    },
  },
  '6DJ8': {
    name: '6DJ8', kind: 'triode', description: 'Frame-grid twin triode (ECC88), mu about 30',
    capacitance: { gridPlateFarads: 1.4e-12, gridCathodeFarads: 3.3e-12, plateCathodeFarads: 1.8e-12, source: 'ECC88 sheet, system 1 (from memory, not confirmed)' },
    model: { mu: 28, ex: 1.3, kg1: 330, kp: 320, kvb: 300 },
    gridCurrent: DZ_12AX7_GRID,
    modelSource: KOREN, gridSource: DZ_BORROWED,
    ratings: {
      plateVolts: 130, plateWatts: 1.5, cathodeAmps: 0.025, heaterCathodeVolts: 150, heaterVolts: 6.3, heaterAmps: 0.365,
      gridCircuitOhms: 1e6,
      source: 'all ratings from memory (ECC88 sheet not confirmed)',
    },
  },
  EF86: {
    name: 'EF86', kind: 'pentode', description: 'Small-signal pentode',
    capacitance: { gridPlateFarads: 0.05e-12, gridCathodeFarads: 3.8e-12, plateCathodeFarads: 5.3e-12, source: 'EF86 sheet, input and output capacitance (from memory, not confirmed); g1-plate 0.05 pF also given in a public pentode-preamp tutorial' },
    model: { mu: 34.9, ex: 1.35, kg1: 2648.1, kg2: 4627, kp: 222.06, kvb: 4.7 },
    gridCurrent: DZ_12AX7_GRID,
    modelSource: 'Koren-form pentode fit published in public code (not by Koren); matches the EF86 sheet at Va 250 / Vg2 140 / Vg1 -2 V',
    gridSource: DZ_BORROWED,
    ratings: {
      plateVolts: 300, plateWatts: 1.0, screenVolts: 200, screenWatts: 0.2, cathodeAmps: 0.006,
      heaterCathodeVolts: 100, heaterVolts: 6.3, heaterAmps: 0.2, gridCircuitOhms: 3e6,
      source: 'EF86 sheet: Pa, Ik, heater confirmed; Va, Vg2, Pg2 from memory; Vhk and grid-circuit resistance from memory',
    },
  },
};

export function tubeType(name: string): TubeType {
  const t = TUBE_LIBRARY[name];
  if (!t) throw new Error(`unknown tube type "${name}" (known: ${Object.keys(TUBE_LIBRARY).join(', ')})`);
  return t;
}

/** Strong / nominal / weak sample factors (spread about 0.66-1.33 x, tube tester article in check-values). */
export const TUBE_SAMPLES = { weak: 0.7, nominal: 1, strong: 1.3 } as const;
