// Parts list (CSV per RFC 4180) and SPICE export. The SPICE text is parsed back structurally and
// its behavioural-source expressions are evaluated by a tiny evaluator written here, then
// compared with src/dsp/tubes/models.ts (the netlist-v1 equations: Koren 1996, Dempwolf-Zolzer DAFx-11).
import { describe, expect, it } from 'vitest';
import { checkDesign } from '../src/dsp/analysis/check.ts';
import { partsCsv, partsRows, PARTS_COLUMNS } from '../src/dsp/analysis/parts-list.ts';
import { spiceNodeMap, toSpice } from '../src/dsp/analysis/spice.ts';
import { designToNetlist } from '../src/dsp/circuit/design.ts';
import { PENTODE_INTO_TRIODE, TRIODE_INTO_TRIODE } from '../src/dsp/circuit/templates.ts';
import { gridCurrentAt } from '../src/dsp/tubes/grid-laws.ts';
import { korenPentodePlate, korenPentodeScreen, korenTriode, newSlopes } from '../src/dsp/tubes/models.ts';
import type { NetTube } from '../src/dsp/circuit/netlist.ts';

/** RFC 4180 reader: quoted fields, doubled quotes, CRLF records. */
function readCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [],
    field = '',
    q = false;
  for (let i = 0; i < text.length; i++) {
    const c = text[i]!;
    if (q) {
      if (c === '"') {
        if (text[i + 1] === '"') {
          field += '"';
          i++;
        } else q = false;
      } else field += c;
    } else if (c === '"') q = true;
    else if (c === ',') {
      row.push(field);
      field = '';
    } else if (c === '\r' && text[i + 1] === '\n') {
      row.push(field);
      rows.push(row);
      row = [];
      field = '';
      i++;
    } else field += c;
  }
  return rows;
}

describe('parts list CSV', () => {
  it('one row per part plus the supply filter, header first, ratings to buy from the sheet', () => {
    const r = checkDesign(TRIODE_INTO_TRIODE, { maxInputSeconds: 0.05 });
    const csv = partsCsv(partsRows(TRIODE_INTO_TRIODE, r.ratings, r.findings));
    const rows = readCsv(csv);
    expect(rows[0]).toEqual([...PARTS_COLUMNS]);
    expect(rows.length).toBe(1 + TRIODE_INTO_TRIODE.parts.length + 1);
    for (const row of rows) expect(row.length).toBe(PARTS_COLUMNS.length);
    const c5 = rows.find((x) => x[0] === 'C5')!;
    expect(c5[4]).toBe('400 V'); // 300 V at cold start / 0.8 = 375 V -> 400 V
    expect(rows.find((x) => x[0] === 'R2')![2]).toBe('4M7'); // RKM code (IEC 60062 style)
    expect(rows.find((x) => x[0] === 'R3')![3]).toBe('±5%');
  });
});

// ---- a tiny expression evaluator: numbers, V(a,b), + - * /, unary -, comparisons, ?:, functions
type Env = (a: string, b: string) => number;
function evaluate(src: string, V: Env): number {
  let i = 0;
  const peek = () => src[i];
  const eat = (s: string) => {
    if (src.startsWith(s, i)) {
      i += s.length;
      return true;
    }
    return false;
  };
  const fns: Record<string, (...x: number[]) => number> = {
    exp: Math.exp,
    ln: Math.log,
    sqrt: Math.sqrt,
    atan: Math.atan,
    abs: Math.abs,
    max: Math.max,
    min: Math.min,
    pwr: (x, y) => Math.pow(Math.abs(x), y),
  };
  const primary = (): number => {
    if (eat('(')) {
      const v = ternary();
      if (!eat(')')) throw new Error(`) expected at ${i}`);
      return v;
    }
    if (eat('-')) return -primary();
    const m = /^(\d+\.?\d*(?:e[+-]?\d+)?|\.\d+(?:e[+-]?\d+)?)/i.exec(src.slice(i));
    if (m) {
      i += m[0].length;
      return Number(m[0]);
    }
    const id = /^[A-Za-z_]\w*/.exec(src.slice(i));
    if (!id) throw new Error(`unexpected ${peek()} at ${i}`);
    i += id[0].length;
    if (!eat('(')) throw new Error(`( expected after ${id[0]}`);
    if (id[0] === 'V') {
      const n = /^(\w+),(\w+)\)/.exec(src.slice(i));
      if (!n) throw new Error('V(a,b) expected');
      i += n[0].length;
      return V(n[1]!, n[2]!);
    }
    const args: number[] = [ternary()];
    while (eat(',')) args.push(ternary());
    if (!eat(')')) throw new Error(') expected');
    const f = fns[id[0]];
    if (!f) throw new Error(`unknown function ${id[0]}`);
    return f(...args);
  };
  const term = (): number => {
    let v = primary();
    for (;;) {
      if (eat('*')) v *= primary();
      else if (eat('/')) v /= primary();
      else return v;
    }
  };
  const sum = (): number => {
    let v = term();
    for (;;) {
      if (eat('+')) v += term();
      else if (peek() === '-') {
        i++;
        v -= term();
      } else return v;
    }
  };
  const cmp = (): number => {
    const v = sum();
    if (eat('>')) return v > sum() ? 1 : 0;
    if (eat('<')) return v < sum() ? 1 : 0;
    return v;
  };
  const ternary = (): number => {
    const c = cmp();
    if (eat('?')) {
      const a = ternary();
      if (!eat(':')) throw new Error(': expected');
      const b = ternary();
      return c !== 0 ? a : b;
    }
    return c;
  };
  const v = ternary();
  if (i !== src.length) throw new Error(`trailing input at ${i}: ${src.slice(i, i + 20)}`);
  return v;
}

interface SpiceLine {
  name: string;
  nodes: string[];
  rest: string;
}
function parseSpice(text: string): SpiceLine[] {
  const lines = text.split('\n').filter((l) => l && !l.startsWith('*') && !l.startsWith('.'));
  return lines.map((l) => {
    const t = l.split(' ');
    const name = t[0]!;
    const k = name[0]!.toUpperCase();
    return { name, nodes: t.slice(1, 3), rest: k === 'B' ? l.slice(l.indexOf('I=') + 2) : t.slice(3).join(' ') };
  });
}

describe('SPICE export', () => {
  for (const design of [TRIODE_INTO_TRIODE, PENTODE_INTO_TRIODE]) {
    const n = designToNetlist(design);
    const text = toSpice(n);
    const els = parseSpice(text);
    const map = spiceNodeMap(n);
    it(`${design.name}: every element comes back with its nodes and value`, () => {
      expect(text.trim().endsWith('.end')).toBe(true);
      for (const e of n.elements) {
        if (e.kind === 'resistor' || e.kind === 'capacitor') {
          const s = els.find((x) => x.name.toUpperCase() === `${e.kind === 'resistor' ? 'R' : 'C'}${e.id.replace(/[^A-Za-z0-9_]/g, '_')}`.toUpperCase())!;
          expect(s.nodes).toEqual([map.get(e.nodes[0]), map.get(e.nodes[1])]);
          expect(Number(s.rest)).toBe(e.kind === 'resistor' ? e.ohms : e.farads);
        }
      }
      const count = (k: string) => els.filter((x) => x.name[0]!.toUpperCase() === k).length;
      const tubes = n.elements.filter((e) => e.kind === 'triode' || e.kind === 'pentode') as NetTube[];
      expect(count('B')).toBe(tubes.reduce((a, t) => a + (t.kind === 'pentode' ? 3 : 2), 0));
      expect(count('C')).toBe(n.elements.filter((e) => e.kind === 'capacitor').length);
      // resistors: the netlist's, plus the input's and the supply's series resistance
      expect(count('R')).toBe(n.elements.filter((e) => e.kind === 'resistor').length + 2);
      expect(count('V')).toBe(2);
    });
    it(`${design.name}: behavioural sources evaluate to the model currents`, () => {
      const tubes = n.elements.filter((e) => e.kind === 'triode' || e.kind === 'pentode') as NetTube[];
      const points: [number, number, number][] = [
        [-2, 250, 140],
        [-0.5, 100, 60],
        [0.3, 50, 20],
        [-8, 300, 200],
        [0, 5, 2],
        [-1, -10, 50],
        [-1, 100, -5],
      ];
      const s = newSlopes();
      for (const t of tubes) {
        const k = map.get(t.nodes.cathode)!;
        for (const [vgk, vpk, vsk] of points) {
          const volts: Record<string, number> = { [k]: 0, [map.get(t.nodes.grid)!]: vgk, [map.get(t.nodes.plate)!]: vpk };
          if (t.kind === 'pentode') volts[map.get(t.nodes.screen)!] = vsk;
          const V: Env = (a, b) => (volts[a] ?? 0) - (volts[b] ?? 0);
          const b = (suffix: string) => els.find((x) => x.name === `B${t.id}_${suffix}`)!;
          if (t.kind === 'triode') korenTriode(t.model, vgk, vpk, 1, s);
          else korenPentodePlate(t.model, vgk, vpk, vsk, 1, s);
          expect(evaluate(b('P').rest, V)).toBeCloseTo(s.amps, 15);
          expect(b('P').nodes).toEqual([map.get(t.nodes.plate), k]);
          if (t.kind === 'pentode') {
            korenPentodeScreen(t.model, vgk, vsk, 1, s);
            expect(evaluate(b('S').rest, V)).toBeCloseTo(s.amps, 15);
          }
          gridCurrentAt(t.gridCurrent!, vgk, s);
          expect(evaluate(b('G').rest, V) / s.amps).toBeCloseTo(1, 12);
        }
      }
    });
  }
});
