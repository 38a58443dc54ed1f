// SPICE-syntax netlist export (ngspice-style behavioural sources). Tubes become B-sources whose
// expressions are exactly the netlist-v1 equations (Koren 1996 triode / pentode, the element's
// grid-current law) with the element's own parameters (tube sample already in kg1, kg2).
// softplus(z) = ln(1 + e^z) is written max(z,0) + ln(1 + exp(-abs(z))), the same function
// without overflow. Conditions use the ternary operator; pwr(x,y) = |x|^y is only used for x > 0.
import type { Netlist, NetTube } from '../circuit/netlist.ts';
import { tubeSpiceExpressions } from '../tubes/registry.ts';

export interface SpiceOptions {
  readonly title?: string;
  /** Append .op and a 20 Hz - 20 kHz .ac sweep (default true). */
  readonly analyses?: boolean;
}

const num = (x: number) => String(x);

/** SPICE-safe node names: [A-Za-z0-9_], ground as 0, unique. */
export function spiceNodeMap(n: Netlist): Map<string, string> {
  const map = new Map<string, string>([[n.ground, '0']]);
  const used = new Set(['0']);
  const add = (name: string) => {
    if (map.has(name)) return;
    let s = name.replace(/[^A-Za-z0-9_]/g, '_');
    if (s === '0' || s === '') s = `n_${s}`;
    let t = s,
      k = 1;
    while (used.has(t.toLowerCase())) t = `${s}_${k++}`;
    used.add(t.toLowerCase());
    map.set(name, t);
  };
  add(n.input.node);
  add(n.output.node);
  for (const e of n.elements) for (const x of e.kind === 'triode' || e.kind === 'pentode' ? Object.values(e.nodes) : e.nodes) add(x);
  return map;
}

/** Behavioural current expressions of one tube: [name suffix, from node, to node, expression] (tubes/registry.ts). */
export function tubeExpressions(t: NetTube, node: (n: string) => string): [string, string, string, string][] {
  const k = node(t.nodes.cathode),
    p = node(t.nodes.plate),
    g = node(t.nodes.grid);
  const s = t.kind === 'pentode' ? node(t.nodes.screen) : '';
  const e = tubeSpiceExpressions(t, `V(${g},${k})`, `V(${p},${k})`, `V(${s},${k})`);
  const out: [string, string, string, string][] = [['P', p, k, e.plate]];
  if (e.screen !== undefined) out.push(['S', s, k, e.screen]);
  if (e.grid !== undefined) out.push(['G', g, k, e.grid]);
  return out;
}

/** The netlist as SPICE text. Element names are the netlist ids behind a type letter. */
export function toSpice(n: Netlist, options: SpiceOptions = {}): string {
  const nodes = spiceNodeMap(n);
  const node = (x: string) => nodes.get(x)!;
  const names = new Set<string>();
  const name = (letter: string, id: string) => {
    const s = `${letter}${id.replace(/[^A-Za-z0-9_]/g, '_')}`;
    let t = s,
      k = 1;
    while (names.has(t.toLowerCase())) t = `${s}_${k++}`;
    names.add(t.toLowerCase());
    return t;
  };
  const lines: string[] = [`* ${options.title ?? 'valvewright export'} (netlist-v1 equations; input ${n.input.node}, output ${n.output.node})`];
  const vin = name('V', 'IN'),
    inSrc = n.input.ohms > 0 ? 'vin_src' : node(n.input.node);
  lines.push(`${vin} ${inSrc} 0 DC 0 AC 1`);
  if (n.input.ohms > 0) lines.push(`${name('R', 'IN')} ${inSrc} ${node(n.input.node)} ${num(n.input.ohms)}`);
  for (const e of n.elements) {
    switch (e.kind) {
      case 'resistor':
        lines.push(`${name('R', e.id)} ${node(e.nodes[0])} ${node(e.nodes[1])} ${num(e.ohms)}`);
        break;
      case 'capacitor':
        lines.push(`${name('C', e.id)} ${node(e.nodes[0])} ${node(e.nodes[1])} ${num(e.farads)}`);
        break;
      case 'dc-source': {
        if (e.ohms > 0) {
          const mid = `${e.id.replace(/[^A-Za-z0-9_]/g, '_')}_int`;
          lines.push(`${name('V', e.id)} ${node(e.nodes[0])} ${mid} DC ${num(e.volts)}`);
          lines.push(`${name('R', `${e.id}_S`)} ${mid} ${node(e.nodes[1])} ${num(e.ohms)}`);
        } else lines.push(`${name('V', e.id)} ${node(e.nodes[0])} ${node(e.nodes[1])} DC ${num(e.volts)}`);
        break;
      }
      case 'triode':
      case 'pentode':
        lines.push(`* ${e.id}: ${e.kind} ${e.model.name}${e.gridCurrent ? ` + ${e.gridCurrent.name} grid current` : ''}`);
        for (const [suffix, a, b, expr] of tubeExpressions(e, node)) lines.push(`${name('B', `${e.id}_${suffix}`)} ${a} ${b} I=${expr}`);
        break;
    }
  }
  if (options.analyses !== false) lines.push('.op', '.ac dec 20 20 20k');
  lines.push('.end');
  return lines.join('\n') + '\n';
}
