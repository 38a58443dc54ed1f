// Schematic layout (src/ui/model/sheet-layout.ts) checked from its own geometry, for the
// templates, chains of one to six tube stages and circuits made by random edits: every part once,
// no two part boxes overlapping, no text on a wire or lead, every terminal reached by a wire or a
// flag, signal left to right, supply flags above their part and ground flags below (drafting
// convention, common practice).
import { describe, expect, it } from 'vitest';
import type { Design } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { addPart, makePart, designNodes, nudgePart } from '../src/dsp/circuit/edit.ts';
import { layoutSheet, railNodes, type Point, type SheetLayout } from '../src/ui/model/sheet-layout.ts';
import { stageChain } from './helpers/stages.ts';

type Seg = readonly [Point, Point, string];
function segments(l: SheetLayout): Seg[] {
  const out: Seg[] = [];
  for (const w of l.wires) for (let i = 1; i < w.points.length; i++) out.push([w.points[i - 1]!, w.points[i]!, `net ${w.net}`]);
  for (const p of l.parts) for (const lead of p.leads) for (let i = 1; i < lead.length; i++) out.push([lead[i - 1]!, lead[i]!, `lead of ${p.id}`]);
  return out;
}
/** Text box from its baseline start: 12 px text rises about 10 px and descends about 3 px. */
const textBox = (t: { x: number; y: number; width: number }) => ({ x0: t.x, x1: t.x + t.width, y0: t.y - 10, y1: t.y + 3 });
function crosses(b: { x0: number; x1: number; y0: number; y1: number }, [a, c]: Seg): boolean {
  const [x1, y1] = a,
    [x2, y2] = c;
  if (Math.abs(y1 - y2) < 1e-6) return y1 > b.y0 && y1 < b.y1 && Math.max(x1, x2) > b.x0 && Math.min(x1, x2) < b.x1;
  if (Math.abs(x1 - x2) < 1e-6) return x1 > b.x0 && x1 < b.x1 && Math.max(y1, y2) > b.y0 && Math.min(y1, y2) < b.y1;
  return true; // wiring is orthogonal: a slanted segment is itself a fault
}
const onSeg = ([x, y]: Point, [a, c]: Seg) =>
  Math.abs((c[0] - a[0]) * (y - a[1]) - (c[1] - a[1]) * (x - a[0])) < 1e-6 &&
  x >= Math.min(a[0], c[0]) - 1e-6 &&
  x <= Math.max(a[0], c[0]) + 1e-6 &&
  y >= Math.min(a[1], c[1]) - 1e-6 &&
  y <= Math.max(a[1], c[1]) + 1e-6;

function check(d: Design, l: SheetLayout): void {
  expect(l.parts.map((p) => p.id).sort()).toEqual(d.parts.map((p) => p.id).sort());
  for (let i = 0; i < l.parts.length; i++)
    for (let j = i + 1; j < l.parts.length; j++) {
      const a = l.parts[i]!,
        b = l.parts[j]!;
      const overlap = a.x < b.x + b.width && b.x < a.x + a.width && a.y < b.y + b.height && b.y < a.y + a.height;
      expect(overlap, `${a.id} overlaps ${b.id}`).toBe(false);
    }
  const segs = segments(l);
  const texts = [...l.parts.flatMap((p) => p.texts), ...l.ports.map((p) => p.text)];
  for (const t of texts) for (const s of segs) expect(crosses(textBox(t), s), `"${t.text}" on ${s[2]}`).toBe(false);
  // no two texts on one another (the + of an electrolytic included)
  for (let i = 0; i < texts.length; i++)
    for (let j = i + 1; j < texts.length; j++) {
      const a = textBox(texts[i]!),
        b = textBox(texts[j]!);
      expect(a.x0 < b.x1 && b.x0 < a.x1 && a.y0 < b.y1 && b.y0 < a.y1, `"${texts[i]!.text}" on "${texts[j]!.text}"`).toBe(false);
    }
  const wires = segs.filter((s) => s[2].startsWith('net '));
  for (const p of l.parts)
    for (const t of p.terminals) {
      if (t.flagged) continue;
      expect(
        wires.some((s) => onSeg(t.at, s)),
        `${p.id} ${t.name} (node ${t.node}) has no wire`,
      ).toBe(true);
    }
  const rails = railNodes(d);
  for (const p of l.parts)
    for (const f of p.flags) {
      if (f.kind === 'ground') expect(['S', 'E', 'W'], `${p.id}: a ground flag points ${f.side}`).toContain(f.side);
      if (f.kind === 'rail' && p.symbol !== 'triode' && p.symbol !== 'pentode' && p.terminals.filter((t) => rails.has(t.node)).length === 1)
        expect(f.side, `${p.id}: its rail flag`).toBe('N');
    }
  expect(l.width).toBeGreaterThan(0);
}

describe('schematic layout', () => {
  for (const [key, d] of Object.entries(TEMPLATES)) {
    it(`${key}: parts once, no overlaps, no text on a wire, every terminal connected`, async () => check(d, await layoutSheet(d)));
  }
  for (const n of [1, 2, 3, 4, 5, 6]) {
    it(`a chain of ${n} tube stages lays out cleanly, the stages left to right (a long chain in rows, each left to right)`, async () => {
      const d = stageChain(n);
      const l = await layoutSheet(d);
      check(d, l);
      const at = (id: string) => l.parts.find((p) => p.id === id)!.centre!;
      let rows = 1;
      for (let k = 2; k <= n; k++) {
        const [x0, y0] = at(`V${k - 1}`),
          [x1, y1] = at(`V${k}`);
        const nextRow = y1 > y0 + 150; // a new row starts well below the last stage
        if (nextRow) rows++;
        expect(x1 > x0 || nextRow, `V${k} right of V${k - 1}, or on the next row`).toBe(true);
      }
      expect(rows).toBeLessThanOrEqual(Math.ceil(n / 2));
    });
  }
  it('signal flows left to right in the pentode-triode template', async () => {
    const l = await layoutSheet(TEMPLATES['pentode-triode']!);
    const x = (id: string) => {
      const p = l.parts.find((q) => q.id === id)!;
      return p.x + p.width / 2;
    };
    expect(x('C2')).toBeLessThan(x('V1'));
    expect(x('V1')).toBeLessThan(x('V2'));
    expect(x('V2')).toBeLessThan(x('C5'));
    expect(x('C5')).toBeLessThan(x('VOL'));
  });
  it('circuits grown by random edits still lay out with every part once and every terminal reached', async () => {
    let seed = 99;
    const rnd = () => {
      seed = (seed * 1103515245 + 12345) % 2147483648;
      return seed / 2147483648;
    };
    let d: Design = TEMPLATES['triode-triode']!;
    for (let k = 0; k < 12; k++) {
      const nodes = designNodes(d);
      const kind = (['resistor', 'capacitor', 'switch'] as const)[Math.floor(rnd() * 3)]!;
      const a = nodes[Math.floor(rnd() * nodes.length)]!,
        b = nodes[Math.floor(rnd() * nodes.length)]!;
      const p = makePart(d, { kind, nodes: [a, b] });
      if (typeof p === 'string') continue;
      const r = addPart(d, p);
      if (r.ok) d = r.design;
    }
    expect(d.parts.length).toBeGreaterThan(TEMPLATES['triode-triode']!.parts.length + 5);
    const l = await layoutSheet(d);
    expect(l.parts.map((p) => p.id).sort()).toEqual(d.parts.map((p) => p.id).sort());
    const wires = segments(l).filter((s) => s[2].startsWith('net '));
    for (const p of l.parts)
      for (const t of p.terminals)
        if (!t.flagged)
          expect(
            wires.some((s) => onSeg(t.at, s)),
            `${p.id} ${t.name}`,
          ).toBe(true);
  });
  it('a nudged part moves by its offset and its wires follow it', async () => {
    const d = TEMPLATES['pentode-triode']!;
    const before = await layoutSheet(d);
    const moved = await layoutSheet((nudgePart(d, 'R3', 40, 30) as { ok: true; design: Design }).design);
    const p0 = before.parts.find((p) => p.id === 'R3')!,
      p1 = moved.parts.find((p) => p.id === 'R3')!;
    const s0 = before.parts.find((p) => p.id === 'V1')!,
      s1 = moved.parts.find((p) => p.id === 'V1')!;
    // relative to an unmoved part (the sheet may shift as a whole)
    expect(p1.x - s1.x - (p0.x - s0.x)).toBeCloseTo(40, 9);
    expect(p1.y - s1.y - (p0.y - s0.y)).toBeCloseTo(30, 9);
    const wires = segments(moved).filter((s) => s[2].startsWith('net '));
    for (const t of p1.terminals) if (!t.flagged) expect(wires.some((s) => onSeg(t.at, s))).toBe(true);
  });
});
