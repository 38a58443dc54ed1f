// The live path's tabulated tube laws (src/dsp/tubes/tables.ts, circuit/plan.ts
// LIVE_TUBE_FUNCTIONS) against the exact netlist-v1 equations, at the same rate: on the
// templates and on seeded random two-stage designs, the output of a render with tables differs
// from the exact-law render by at most -80 dB of error energy (the bound the live path is
// allowed; common practice for "inaudible" is well above it).
import { describe, expect, it } from 'vitest';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { designCircuit, type Design, type Part } from '../src/dsp/circuit/design.ts';
import { OversampledCircuit } from '../src/dsp/render/oversampled.ts';
import { TUBE_LIBRARY } from '../src/dsp/tubes/library.ts';
import { HermiteTable, gridLawTable, lawTable } from '../src/dsp/tubes/tables.ts';
import { makeRandom } from '../src/dsp/random.ts';

const FS = 48000;

/** A plucked-string-like test signal: decaying partials at a guitar's level times `peak`. */
function drive(n: number, peak: number): Float64Array {
  const x = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const t = k / FS,
      env = Math.exp(-3 * t);
    x[k] = peak * env * (0.6 * Math.sin(2 * Math.PI * 110 * t) + 0.3 * Math.sin(2 * Math.PI * 331 * t) + 0.1 * Math.sin(2 * Math.PI * 1247 * t));
  }
  return x;
}

/** Error energy of y against ref (ref's DC removed from the signal energy), dB. */
function errorDb(y: Float64Array, ref: Float64Array): number {
  let mean = 0;
  for (const v of ref) mean += v;
  mean /= ref.length;
  let e = 0,
    s = 0;
  for (let k = 0; k < ref.length; k++) {
    e += (y[k]! - ref[k]!) ** 2;
    s += (ref[k]! - mean) ** 2;
  }
  return 10 * Math.log10(e / s);
}

function render(d: Design, tubeFunctions: 'exact' | 'table', x: Float64Array, factor: 1 | 4): Float64Array {
  const oc = new OversampledCircuit(designCircuit(d), FS, factor, undefined, { tubeFunctions });
  return Float64Array.from(x, (v) => oc.processSample(v));
}

/** A template with every resistor, capacitor and pot moved at random (x0.5 … x2), tubes swapped within their kind. */
function randomDesign(base: Design, seed: number): Design {
  const rnd = makeRandom(seed);
  const scale = () => Math.pow(2, 2 * rnd() - 1);
  const triodes = Object.values(TUBE_LIBRARY)
    .filter((t) => t.kind === 'triode')
    .map((t) => t.name);
  const parts = base.parts.map((p): Part => {
    switch (p.kind) {
      case 'resistor':
        return { ...p, ohms: p.ohms * scale() };
      case 'capacitor':
        return { ...p, farads: p.farads * scale() };
      case 'pot':
        return { ...p, position: 0.05 + 0.9 * rnd() };
      case 'tube':
        return p.nodes.screen ? { ...p, sample: 0.8 + 0.4 * rnd() } : { ...p, type: triodes[Math.floor(rnd() * triodes.length)]!, sample: 0.8 + 0.4 * rnd() };
      default:
        return p;
    }
  });
  return { ...base, name: `${base.name} (random ${seed})`, parts, supply: { ...base.supply, volts: 200 + 150 * rnd() } };
}

describe('generic law tables', () => {
  it('tabulate any fused law: a Hermite table of a cubic is exact (de Boor: Hermite interpolation reproduces cubics)', () => {
    const t = lawTable(
      'test:cubic',
      (x, xo, out, o) => {
        const v = x[xo]!;
        out[o] = v * v * v - 2 * v;
        out[o + 1] = 3 * v * v - 2;
      },
      -3,
      3,
      7,
    );
    const out = new Float64Array(2);
    for (let v = -3; v <= 3; v += 0.0137) {
      expect(t.lookup(v, out, 0)).toBe(true);
      expect(out[0]).toBeCloseTo(v * v * v - 2 * v, 12);
      expect(out[1]).toBeCloseTo(3 * v * v - 2, 11);
    }
    expect(t.lookup(3.5, out, 0)).toBe(false);
  });

  it('a new grid law goes through gridLawTable with no code of its own (a Child-Langmuir 3/2 law, common practice)', () => {
    const k = 2e-4;
    const law = (x: Float64Array, xo: number, out: Float64Array, o: number) => {
      const v = x[xo]!;
      out[o] = v > 0 ? k * v ** 1.5 : 0;
      out[o + 1] = v > 0 ? 1.5 * k * Math.sqrt(v) : 0;
    };
    const t: HermiteTable = gridLawTable('test:cl', law);
    const out = new Float64Array(2);
    for (const v of [-5, -0.1, 0.5, 1, 2.5, 5.9]) {
      t.lookup(v, out, 0);
      const exact = v > 0 ? k * v ** 1.5 : 0;
      expect(Math.abs(out[0]! - exact)).toBeLessThanOrEqual(1e-6 * Math.abs(exact) + 1e-12);
    }
  });
});

describe('tables against the exact laws, same rate (error energy <= -80 dB)', () => {
  const x = drive(Math.round(0.25 * FS), 2);
  it.each(Object.keys(TEMPLATES))('template %s at 4x, driven to 2 V peak', (name) => {
    const d = TEMPLATES[name]!;
    const db = errorDb(render(d, 'table', x, 4), render(d, 'exact', x, 4));
    expect(db).toBeLessThanOrEqual(-80);
  });
  it.each([1, 2, 3, 4, 5, 6])('random design %i (values, tube types, supply) at 4x', (seed) => {
    const base = [TEMPLATES['pentode-triode']!, TEMPLATES['triode-triode']!][seed % 2]!;
    const d = randomDesign(base, 1000 + seed);
    const db = errorDb(render(d, 'table', x, 4), render(d, 'exact', x, 4));
    expect(db).toBeLessThanOrEqual(-80);
  });
});
