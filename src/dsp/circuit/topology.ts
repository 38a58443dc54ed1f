// Graph questions about a circuit that need no simulation.
import type { EngineElement } from './engine.ts';

/** Union-find over node names. */
export class NodeSets {
  private readonly parent = new Map<string, string>();
  find(x: string): string {
    let p = this.parent.get(x) ?? x;
    if (p !== x) {
      p = this.find(p);
      this.parent.set(x, p);
    }
    return p;
  }
  union(a: string, b: string): void {
    const ra = this.find(a),
      rb = this.find(b);
    if (ra !== rb) this.parent.set(ra, rb);
  }
  same(a: string, b: string): boolean {
    return this.find(a) === this.find(b);
  }
}

/**
 * Nodes joined by DC-conducting two-terminal parts (resistors, closed switches, dc sources,
 * the input source to ground). Capacitors and tubes do not count.
 */
export function dcConnectivity(elements: readonly EngineElement[], input: { node: string; ohms: number }, ground: string): NodeSets {
  const sets = new NodeSets();
  sets.find(ground);
  for (const e of elements) {
    if (e.kind === 'resistor' || e.kind === 'dc-source' || (e.kind === 'switch' && e.closed)) sets.union(e.nodes[0], e.nodes[1]);
  }
  sets.union(input.node, ground);
  return sets;
}

/** Control grids with no DC path to ground (so also none to their cathode's return). */
export function gridsWithoutDcPath(
  elements: readonly EngineElement[],
  input: { node: string; ohms: number },
  ground: string,
): { tube: string; grid: string }[] {
  const sets = dcConnectivity(elements, input, ground);
  const out: { tube: string; grid: string }[] = [];
  for (const e of elements) {
    if ((e.kind === 'triode' || e.kind === 'pentode') && !sets.same(e.nodes.grid, ground)) out.push({ tube: e.id, grid: e.nodes.grid });
  }
  return out;
}
