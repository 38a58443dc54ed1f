// Which node voltages the scope shows: every tube's grid and plate, in design order.
import type { Design } from '../../dsp/circuit/design.ts';

export function probeNodes(d: Design): string[] {
  const out: string[] = [];
  for (const p of d.parts) if (p.kind === 'tube') for (const n of [p.nodes.grid, p.nodes.plate]) if (!out.includes(n) && n !== '0') out.push(n);
  return out;
}
