// Small designs for the check tests: one clean 12AX7 stage and variations with designed-in faults.
import { DESIGN_SCHEMA, type Design, type Part } from '../../src/dsp/circuit/design.ts';

const k = 1e3,
  M = 1e6,
  n = 1e-9,
  u = 1e-6;

/** A plain cathode-biased 12AX7 stage (common-practice values: 100 k plate, 1.5 k bypassed cathode, 1 M grid). */
export function cleanStage(extra: Partial<Design> = {}): Design {
  return {
    schema: DESIGN_SCHEMA,
    name: 'clean 12AX7 stage',
    input: { node: 'in', ohms: 10 * k },
    output: { node: 'out', loadOhms: 1 * M },
    supply: { node: 'bp', volts: 300, ohms: 1 * k, filterFarads: 47 * u },
    parts: [
      { id: 'R1', kind: 'resistor', nodes: ['bp', 'b1'], ohms: 10 * k, tolerance: 0.05 },
      { id: 'C1', kind: 'capacitor', nodes: ['b1', '0'], farads: 22 * u, polarized: true, tolerance: 0.2 },
      { id: 'C2', kind: 'capacitor', nodes: ['in', 'g1'], farads: 22 * n, tolerance: 0.1 },
      { id: 'R2', kind: 'resistor', nodes: ['g1', '0'], ohms: 1 * M, tolerance: 0.05 },
      { id: 'V1', kind: 'tube', type: '12AX7', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: 'k1' }, heaterVolts: 0 },
      { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 100 * k, tolerance: 0.05 },
      { id: 'R4', kind: 'resistor', nodes: ['k1', '0'], ohms: 1.5 * k, tolerance: 0.05 },
      { id: 'C3', kind: 'capacitor', nodes: ['k1', '0'], farads: 22 * u, polarized: true, tolerance: 0.2 },
      { id: 'C4', kind: 'capacitor', nodes: ['p1', 'out'], farads: 22 * n, tolerance: 0.1 },
    ],
    ...extra,
  };
}

export function edit(d: Design, change: { remove?: readonly string[]; add?: readonly Part[]; replace?: readonly Part[] }): Design {
  const rm = new Set(change.remove ?? []);
  const rep = new Map((change.replace ?? []).map((p) => [p.id, p]));
  return { ...d, parts: [...d.parts.filter((p) => !rm.has(p.id)).map((p) => rep.get(p.id) ?? p), ...(change.add ?? [])] };
}

/** An EF86 stage (screen fed through 1 M and bypassed, cathode biased). */
export function pentodeStage(): Design {
  return edit(cleanStage({ name: 'EF86 stage' }), {
    replace: [
      { id: 'V1', kind: 'tube', type: 'EF86', sample: 1, nodes: { plate: 'p1', grid: 'g1', cathode: 'k1', screen: 's1' }, heaterVolts: 0 },
      { id: 'R3', kind: 'resistor', nodes: ['b1', 'p1'], ohms: 220 * k },
      { id: 'R4', kind: 'resistor', nodes: ['k1', '0'], ohms: 2.2 * k },
    ],
    add: [
      { id: 'R5', kind: 'resistor', nodes: ['b1', 's1'], ohms: 1 * M },
      { id: 'C5', kind: 'capacitor', nodes: ['s1', '0'], farads: 100 * n },
    ],
  });
}
