// Starting designs of our own. They are ordinary designs (data), compiled like any other.
import { DESIGN_SCHEMA, type Design, type Part } from './design.ts';

const k = 1e3,
  M = 1e6,
  n = 1e-9,
  u = 1e-6;

/** Shared back half: direct-coupled triode with bypassed cathode, then treble cut and volume. */
function secondStageAndTone(firstPlate: string, rk2Ohms: number, rp2Ohms: number): Part[] {
  return [
    { id: 'V2', kind: 'tube', type: '12AX7', sample: 1, nodes: { plate: 'p2', grid: firstPlate, cathode: 'k2' }, heaterVolts: 0, label: 'second stage' },
    { id: 'R6', kind: 'resistor', nodes: ['b1', 'p2'], ohms: rp2Ohms, tolerance: 0.05, label: 'V2 plate load' },
    { id: 'R7', kind: 'resistor', nodes: ['k2', '0'], ohms: rk2Ohms, tolerance: 0.05, label: 'V2 cathode (sets the DC-coupled bias)' },
    { id: 'C4', kind: 'capacitor', nodes: ['k2', '0'], farads: 10 * u, tolerance: 0.2, polarized: true, label: 'V2 cathode bypass' },
    { id: 'C5', kind: 'capacitor', nodes: ['p2', 't1'], farads: 22 * n, tolerance: 0.1, label: 'output coupling' },
    // Treble cut, brighter clockwise (common practice): the pot is a variable resistor in series
    // with C6, log taper so the cut spreads over the whole travel. As the circuit drives it (the
    // second stage's output impedance, about 35-45 k; volume full) 10 kHz against 300 Hz is about
    // -20 dB at 0 (corner about 1 kHz), -6 dB at the middle and flat at 10
    // (npx valvewright ac --design pentode-triode prints the corners).
    { id: 'R8', kind: 'resistor', nodes: ['t1', 'tn'], ohms: 4.7 * k, tolerance: 0.05, label: 'tone series' },
    { id: 'TONE', kind: 'pot', nodes: ['tn', 'tc', 'tc'], ohms: 250 * k, taper: 'log', position: 0.5, label: 'tone (treble cut, brighter clockwise)' },
    { id: 'C6', kind: 'capacitor', nodes: ['tc', '0'], farads: 4.7 * n, tolerance: 0.1, label: 'tone capacitor' },
    // end 1 at ground, louder clockwise (common practice); full by default (render and the
    // workspace level against full volume, so this is the levelled output)
    { id: 'VOL', kind: 'pot', nodes: ['0', 'out', 'tn'], ohms: 500 * k, taper: 'log', position: 1, label: 'volume' },
  ];
}

const supplyParts: Part[] = [
  { id: 'R1', kind: 'resistor', nodes: ['bp', 'b1'], ohms: 10 * k, tolerance: 0.05, label: 'supply decoupling' },
  { id: 'C1', kind: 'capacitor', nodes: ['b1', '0'], farads: 22 * u, tolerance: 0.2, polarized: true, label: 'decoupling capacitor' },
];

/** Guitar input, output load and a 300 V supply shared by the two-stage templates. */
const twoStageShell = {
  input: { node: 'in', ohms: 10 * k },
  output: { node: 'out', loadOhms: 1 * M },
  supply: { node: 'bp', volts: 300, ohms: 1 * k, filterFarads: 47 * u },
} as const;

/** Input coupling into a grid-leak-biased first grid (g1). */
const gridLeakInput: Part[] = [
  { id: 'C2', kind: 'capacitor', nodes: ['in', 'g1'], farads: 10 * n, tolerance: 0.1, label: 'input coupling' },
  { id: 'R2', kind: 'resistor', nodes: ['g1', '0'], ohms: 4.7 * M, tolerance: 0.05, label: 'grid leak' },
];

/** (1) Pentode first stage, grounded cathode, grid-leak bias, direct-coupled into a triode. */
export const PENTODE_INTO_TRIODE: Design = {
  schema: DESIGN_SCHEMA,
  name: 'Hearthstone (pentode front)',
  description: 'Starved EF86 with grid-leak bias, direct-coupled into a 12AX7 with a bypassed cathode, treble cut and volume.',
  ...twoStageShell,
  parts: [
    ...supplyParts,
    ...gridLeakInput,
    { id: 'V1', kind: 'tube', type: 'EF86', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: '0', screen: 's1' }, heaterVolts: 0, label: 'first stage' },
    { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 470 * k, tolerance: 0.05, label: 'V1 plate load' },
    { id: 'R4', kind: 'resistor', nodes: ['b1', 's1'], ohms: 2.2 * M, tolerance: 0.05, label: 'V1 screen feed' },
    { id: 'C3', kind: 'capacitor', nodes: ['s1', '0'], farads: 100 * n, tolerance: 0.1, label: 'screen bypass' },
    ...secondStageAndTone('p1', 68 * k, 100 * k),
  ],
};

/** (2) The same with a triode first stage. */
export const TRIODE_INTO_TRIODE: Design = {
  schema: DESIGN_SCHEMA,
  name: 'Hearthstone (triode front)',
  description: 'Grid-leak-biased 12AX7 direct-coupled into a second 12AX7 with a bypassed cathode, treble cut and volume.',
  ...twoStageShell,
  parts: [
    ...supplyParts,
    ...gridLeakInput,
    { id: 'V1', kind: 'tube', type: '12AX7', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: '0' }, heaterVolts: 0, label: 'first stage' },
    { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 220 * k, tolerance: 0.05, label: 'V1 plate load' },
    ...secondStageAndTone('p1', 150 * k, 100 * k),
  ],
};

/** (3) One pentode stage with cathode bias; a switch lifts the cathode to turn the effect off. */
export const SINGLE_PENTODE: Design = {
  schema: DESIGN_SCHEMA,
  name: 'Lantern (single pentode)',
  description: 'One EF86 with a bypassed cathode resistor; the switch lifts the cathode return to silence the stage.',
  input: { node: 'in', ohms: 10 * k },
  output: { node: 'out', loadOhms: 1 * M },
  supply: { node: 'bp', volts: 250, ohms: 1 * k, filterFarads: 47 * u },
  parts: [
    ...supplyParts,
    { id: 'C2', kind: 'capacitor', nodes: ['in', 'g1'], farads: 22 * n, tolerance: 0.1, label: 'input coupling' },
    { id: 'R2', kind: 'resistor', nodes: ['g1', '0'], ohms: 1 * M, tolerance: 0.05, label: 'grid resistor' },
    { id: 'V1', kind: 'tube', type: 'EF86', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: 'k1', screen: 's1' }, heaterVolts: 0, label: 'the stage' },
    { id: 'R5', kind: 'resistor', nodes: ['k1', 'kr'], ohms: 2.2 * k, tolerance: 0.05, label: 'cathode resistor' },
    { id: 'C7', kind: 'capacitor', nodes: ['k1', 'kr'], farads: 22 * u, tolerance: 0.2, polarized: true, label: 'cathode bypass' },
    { id: 'S1', kind: 'switch', nodes: ['kr', '0'], closed: true, label: 'effect on (closed) / cathode lifted (open)' },
    { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 220 * k, tolerance: 0.05, label: 'plate load' },
    { id: 'R4', kind: 'resistor', nodes: ['b1', 's1'], ohms: 1 * M, tolerance: 0.05, label: 'screen feed' },
    { id: 'C3', kind: 'capacitor', nodes: ['s1', '0'], farads: 100 * n, tolerance: 0.1, label: 'screen bypass' },
    { id: 'C5', kind: 'capacitor', nodes: ['p1', 't1'], farads: 22 * n, tolerance: 0.1, label: 'output coupling' },
    { id: 'VOL', kind: 'pot', nodes: ['0', 'out', 't1'], ohms: 500 * k, taper: 'log', position: 1, label: 'volume' },
  ],
};

export const TEMPLATES: Readonly<Record<string, Design>> = {
  'pentode-triode': PENTODE_INTO_TRIODE,
  'triode-triode': TRIODE_INTO_TRIODE,
  'single-pentode': SINGLE_PENTODE,
};
