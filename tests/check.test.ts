// Wiring check: a designed-in fault for each rule must be reported; clean designs must pass.
// The rules are common practice of tube-amplifier building (grid leak, cathode return, screen
// feed, input to a control grid, plate load between B+ and a grid, electrolytic polarity).
import { describe, expect, it } from 'vitest';
import { checkWiring, type Finding } from '../src/dsp/analysis/wiring-check.ts';
import { checkDesign } from '../src/dsp/analysis/check.ts';
import { validateDesign, DesignError } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { designCircuit } from '../src/dsp/circuit/design.ts';
import { cleanStage, edit, pentodeStage } from './helpers/designs.ts';

const serious = (f: readonly Finding[]) => f.filter((x) => x.severity !== 'note');
const codes = (f: readonly Finding[]) => f.map((x) => x.code);

describe('clean designs pass', () => {
  it('a plain cathode-biased 12AX7 stage has no errors or warnings (wiring and ratings)', () => {
    const r = checkDesign(cleanStage(), { maxInputSeconds: 0.05 });
    expect(serious(r.findings)).toEqual([]);
  });
  it('an EF86 stage with a fed screen passes', () => {
    expect(serious(checkDesign(pentodeStage(), { maxInputSeconds: 0.05 }).findings)).toEqual([]);
  });
  for (const [name, d] of Object.entries(TEMPLATES)) {
    it(`template ${name} has notes only`, () => {
      expect(serious(checkDesign(d, { maxInputSeconds: 0.05 }).findings)).toEqual([]);
    });
  }
});

describe('designed-in wiring faults (common practice)', () => {
  const find = (d: Parameters<typeof checkWiring>[0], code: string) => {
    const f = checkWiring(validateDesign(d, { wiring: false })).filter((x) => x.code === code);
    return f;
  };
  it('control grid without a DC path (grid resistor left out)', () => {
    const d = edit(cleanStage(), { remove: ['R2'] });
    expect(() => validateDesign(d)).toThrow(DesignError); // the strict loader refuses it ...
    const f = find(d, 'grid-no-dc-path'); // ... the check names it
    expect(f).toHaveLength(1);
    expect(f[0]!.severity).toBe('error');
    expect(f[0]!.parts).toContain('V1');
    expect(f[0]!.nodes).toContain('g1');
    expect(f[0]!.message).toMatch(/grid resistor/);
  });
  it('cathode without a return (cathode resistor left out, bypass capacitor kept)', () => {
    const f = find(edit(cleanStage(), { remove: ['R4'] }), 'cathode-no-return');
    expect(f).toHaveLength(1);
    expect(f[0]!.nodes).toEqual(['k1']);
  });
  it('a cathode lifted by an open switch is only a note', () => {
    const d = edit(cleanStage(), {
      replace: [{ id: 'R4', kind: 'resistor', nodes: ['k1', 'kr'], ohms: 1500 }],
      add: [{ id: 'S1', kind: 'switch', nodes: ['kr', '0'], closed: false }],
    });
    const f = checkWiring(d);
    expect(f.find((x) => x.code === 'cathode-lifted')?.severity).toBe('note');
    expect(serious(f)).toEqual([]);
  });
  it('a floating node between two series capacitors', () => {
    const d = edit(cleanStage(), {
      add: [
        { id: 'C8', kind: 'capacitor', nodes: ['out', 'mid'], farads: 1e-9 },
        { id: 'C9', kind: 'capacitor', nodes: ['mid', '0'], farads: 1e-9 },
      ],
    });
    const f = find(d, 'node-floats');
    expect(f.map((x) => x.nodes[0])).toEqual(['mid']);
    expect([...f[0]!.parts].sort()).toEqual(['C8', 'C9']);
  });
  it('a screen not fed (screen resistor to ground instead of B+)', () => {
    const d = edit(pentodeStage(), { replace: [{ id: 'R5', kind: 'resistor', nodes: ['s1', '0'], ohms: 1e6 }] });
    const f = find(d, 'screen-not-fed');
    expect(f).toHaveLength(1);
    expect(f[0]!.nodes).toEqual(['s1']);
  });
  it('input wired to the plate instead of the grid', () => {
    const d = edit(cleanStage(), {
      replace: [{ id: 'C2', kind: 'capacitor', nodes: ['in', 'p1'], farads: 22e-9 }],
      add: [{ id: 'R9', kind: 'resistor', nodes: ['g1', '0'], ohms: 1e6 }],
    });
    const all = checkWiring(validateDesign(d, { wiring: false }));
    expect(codes(all)).toContain('input-on-plate');
    expect(codes(all)).toContain('input-reaches-no-grid');
  });
  it('input wired to a screen', () => {
    const d = edit(pentodeStage(), {
      replace: [{ id: 'C2', kind: 'capacitor', nodes: ['in', 's1'], farads: 22e-9 }],
      add: [{ id: 'R9', kind: 'resistor', nodes: ['g1', '0'], ohms: 1e6 }],
    });
    expect(codes(checkWiring(validateDesign(d, { wiring: false })))).toContain('input-on-screen');
  });
  it('B+ reaching a control grid through a small resistance', () => {
    // 1 k straight from B+: error; 10 k + 47 k through the decoupling resistor: warning (project thresholds 10 k / 100 k)
    const f = find(edit(cleanStage(), { add: [{ id: 'R9', kind: 'resistor', nodes: ['bp', 'g1'], ohms: 1000 }] }), 'bplus-to-grid');
    expect(f).toHaveLength(1);
    expect(f[0]!.severity).toBe('error');
    expect(f[0]!.parts).toEqual(['V1', 'R9']);
    const w = find(edit(cleanStage(), { add: [{ id: 'R9', kind: 'resistor', nodes: ['b1', 'g1'], ohms: 47000 }] }), 'bplus-to-grid');
    expect(w.map((x) => x.severity)).toEqual(['warning']);
    expect(w[0]!.parts).toEqual(['V1', 'R1', 'R9']);
  });
  it('a polarised cathode bypass capacitor turned round', () => {
    const d = edit(cleanStage(), { replace: [{ id: 'C3', kind: 'capacitor', nodes: ['0', 'k1'], farads: 22e-6, polarized: true }] });
    const op = new CircuitEngine(designCircuit(d), 48000).operatingPoint();
    const f = checkWiring(d, { warmNodes: op.nodes }).filter((x) => x.code === 'capacitor-reversed');
    expect(f).toHaveLength(1);
    expect(f[0]!.parts).toEqual(['C3']);
    // the same capacitor the right way round is fine
    expect(
      checkWiring(cleanStage(), { warmNodes: new CircuitEngine(designCircuit(cleanStage()), 48000).operatingPoint().nodes }).map((x) => x.code),
    ).not.toContain('capacitor-reversed');
  });
  it('a misspelt node (one terminal only)', () => {
    const d = edit(cleanStage(), { replace: [{ id: 'R3', kind: 'resistor', nodes: ['b1', 'pl'], ohms: 1e5 }] });
    expect(codes(checkWiring(validateDesign(d, { wiring: false })))).toEqual(expect.arrayContaining(['node-dangling', 'plate-not-fed']));
  });
});
