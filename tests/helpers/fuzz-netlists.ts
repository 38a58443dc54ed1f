// Fuzzed netlists for the CLI torture test: a random family member (random-netlists.ts) with
// values pushed far out of range, parts removed and leads moved, in seeded combinations.
import type { NetElement, Netlist } from '../../src/dsp/circuit/netlist.ts';
import { randomNetlist, seeded } from './random-netlists.ts';

type Mutable<T> = { -readonly [K in keyof T]: T[K] };

export interface FuzzedNetlist {
  /** The netlist as JSON text (it may not be a valid netlist at all). */
  readonly json: string;
  /** What was done to it. */
  readonly label: string;
}

/** Fuzz case `index` for `seed`: 1-3 mutations of a family member. */
export function fuzzedNetlist(seed: number, index: number): FuzzedNetlist {
  const base = randomNetlist(seed, index).netlist;
  const r = seeded(seed * 31 + index * 977 + 5);
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)]!;
  const els: Mutable<NetElement>[] = base.elements.map((e) => JSON.parse(JSON.stringify(e)) as Mutable<NetElement>);
  const nodes = [...new Set(base.elements.flatMap((e) => (e.kind === 'triode' || e.kind === 'pentode' ? Object.values(e.nodes) : [...e.nodes])))];
  const input = { ...base.input };
  const done: string[] = [];
  const n = 1 + Math.floor(r() * 3);
  for (let q = 0; q < n && els.length > 0; q++) {
    const what = r();
    const k = Math.floor(r() * els.length);
    const e = els[k]!;
    if (what < 0.4) {
      // a value out of range: 10^(±1..±15) times, or an extreme constant
      const f = Math.pow(10, (r() < 0.5 ? -1 : 1) * (1 + 14 * r()));
      if (e.kind === 'resistor') {
        e.ohms *= f;
        done.push(`${e.id} x${f.toExponential(0)}`);
      } else if (e.kind === 'capacitor') {
        e.farads *= f;
        done.push(`${e.id} x${f.toExponential(0)}`);
      } else if (e.kind === 'dc-source') {
        const v = pick([e.volts * f, -e.volts, 1e5, 0]);
        e.volts = v;
        if (r() < 0.3) e.ohms = pick([0, 1e-6, 1e9]);
        done.push(`${e.id} ${v.toExponential(1)} V, ${e.ohms} ohm`);
      } else {
        const m = e.model as unknown as Record<string, number>;
        const key = pick(Object.keys(m).filter((x) => x !== 'name'));
        m[key] = m[key]! * f;
        done.push(`${e.id}.${key} x${f.toExponential(0)}`);
      }
    } else if (what < 0.65) {
      els.splice(k, 1);
      done.push(`removed ${e.id}`);
    } else if (what < 0.9) {
      // a lead moved to another node, to ground, or to a new (dangling) node
      const to = pick([...nodes, '0', `x${q}`]);
      if (e.kind === 'triode' || e.kind === 'pentode') {
        const t = e.nodes as Record<string, string>;
        const lead = pick(Object.keys(t));
        t[lead] = to;
        done.push(`${e.id}.${lead} -> ${to}`);
      } else {
        const ns = [...e.nodes] as [string, string];
        const j = r() < 0.5 ? 0 : 1;
        ns[j] = to;
        (e as { nodes: readonly [string, string] }).nodes = ns;
        done.push(`${e.id} lead ${j} -> ${to}`);
      }
    } else {
      input.ohms = pick([0, 1e-9, 1e12]);
      done.push(`input ohms ${input.ohms}`);
    }
  }
  const netlist: Netlist = { ...base, input, elements: els as NetElement[] };
  return { json: JSON.stringify(netlist), label: `fuzz ${seed} #${index}: ${done.join('; ')}` };
}
