// A chain of N resistance-coupled 12AX7 stages (common-cathode, bypassed cathode, 100 k plate
// loads, 1.5 k cathode resistors: common practice for small-signal triode stages), with a volume
// pot at the end, for layout and editing tests.
import { DESIGN_SCHEMA, type Design, type Part } from '../../src/dsp/circuit/design.ts';

export function stageChain(stages: number, name = `${stages}-stage chain`): Design {
  const parts: Part[] = [
    { id: 'RD', kind: 'resistor', nodes: ['bp', 'b1'], ohms: 10e3, label: 'supply decoupling' },
    { id: 'CD', kind: 'capacitor', nodes: ['b1', '0'], farads: 22e-6, polarized: true, label: 'decoupling capacitor' },
  ];
  let prev = 'in';
  for (let k = 1; k <= stages; k++) {
    parts.push(
      { id: `CI${k}`, kind: 'capacitor', nodes: [prev, `g${k}`], farads: 22e-9, label: `stage ${k} coupling` },
      { id: `RG${k}`, kind: 'resistor', nodes: [`g${k}`, '0'], ohms: 1e6, label: `stage ${k} grid leak` },
      { id: `V${k}`, kind: 'tube', type: '12AX7', sample: 1, nodes: { plate: `p${k}`, grid: `g${k}`, cathode: `k${k}` } },
      { id: `RP${k}`, kind: 'resistor', nodes: ['b1', `p${k}`], ohms: 100e3, label: `stage ${k} plate load` },
      { id: `RK${k}`, kind: 'resistor', nodes: [`k${k}`, '0'], ohms: 1.5e3, label: `stage ${k} cathode` },
      { id: `CK${k}`, kind: 'capacitor', nodes: [`k${k}`, '0'], farads: 22e-6, polarized: true, label: `stage ${k} bypass` },
    );
    prev = `p${k}`;
  }
  parts.push(
    { id: 'CO', kind: 'capacitor', nodes: [prev, 'v'], farads: 22e-9, label: 'output coupling' },
    { id: 'VOL', kind: 'pot', nodes: ['v', 'out', '0'], ohms: 500e3, taper: 'log', position: 0.3, label: 'volume' },
  );
  return {
    schema: DESIGN_SCHEMA,
    name,
    input: { node: 'in', ohms: 10e3 },
    output: { node: 'out', loadOhms: 1e6 },
    supply: { node: 'bp', volts: 300, ohms: 1e3, filterFarads: 47e-6 },
    parts,
  };
}
