// Automatic schematic layout: a layered left-to-right drawing by signal flow.
// The shortest input-to-output path is the main row; parts hanging off a row node go down
// (to ground or side nodes) or up (to supply rails); cathode and screen circuits hang below
// their tube. Anything the walk cannot place is drawn in a bottom row with net labels, so
// every part appears exactly once. Pure: no DOM.
import { GROUND, type Design, type Part, type PotPart, type TubePart } from '../../dsp/circuit/design.ts';
import { tubeType } from '../../dsp/tubes/library.ts';

export type Point = readonly [number, number];

export interface PlacedTwoTerminal {
  readonly id: string;
  readonly kind: 'resistor' | 'capacitor' | 'switch' | 'pot2';
  /** Terminal positions (a = first end, b = second end). */
  readonly a: Point;
  readonly b: Point;
}
export interface PlacedPot3 {
  readonly id: string;
  readonly kind: 'pot3';
  readonly a: Point; // end 1
  readonly b: Point; // end 2
  readonly wiper: Point; // wiper terminal (beside the track)
}
export interface PlacedTube {
  readonly id: string;
  readonly kind: 'tube';
  readonly centre: Point;
  readonly radius: number;
  readonly pentode: boolean;
  readonly grid: Point;
  readonly plate: Point;
  readonly cathode: Point;
  readonly screen: Point | null;
}
export type PlacedPart = PlacedTwoTerminal | PlacedPot3 | PlacedTube;

export interface Flag {
  readonly at: Point;
  readonly kind: 'ground' | 'rail' | 'net' | 'terminal';
  readonly text: string;
  readonly dir: 'up' | 'down' | 'left' | 'right';
}

export interface SchematicLayout {
  readonly width: number;
  readonly height: number;
  readonly parts: readonly PlacedPart[];
  readonly wires: readonly (readonly Point[])[];
  readonly flags: readonly Flag[];
  readonly dots: readonly Point[];
  readonly nodeLabels: readonly { readonly at: Point; readonly text: string }[];
}

const L = 60; // terminal-to-terminal length of a two-terminal symbol
const SP = 56; // horizontal pitch of hanging parts
const R = 30; // tube envelope radius
const MARGIN = 40;

interface Builder {
  parts: PlacedPart[];
  wires: Point[][];
  flags: Flag[];
  dots: Point[];
  nodeLabels: { at: Point; text: string }[];
  placed: Set<string>;
  drawnNodes: Set<string>;
}

/** Rails: ground, the supply node, and nodes fed from a rail by a resistor and decoupled by >= 1 uF to ground. */
export function railNodes(d: Design): Set<string> {
  const rails = new Set<string>([GROUND, d.supply.node]);
  let grew = true;
  while (grew) {
    grew = false;
    for (const p of d.parts) {
      if (p.kind !== 'resistor') continue;
      const [x, y] = p.nodes;
      // fed from a supply rail (never from ground: a bypassed cathode is not a rail)
      const fed = (n: string) => rails.has(n) && n !== GROUND;
      const cand = fed(x) && !rails.has(y) ? y : fed(y) && !rails.has(x) ? x : null;
      if (cand === null || cand === d.input.node || cand === d.output.node) continue;
      const decoupled = d.parts.some((q) => q.kind === 'capacitor' && q.farads >= 1e-6 && q.nodes.includes(cand) && q.nodes.includes(GROUND));
      if (decoupled) { rails.add(cand); grew = true; }
    }
  }
  return rails;
}

export function partNodes(p: Part): string[] {
  return p.kind === 'tube' ? Object.values(p.nodes).filter((n): n is string => typeof n === 'string') : [...p.nodes];
}

/** Edges along which signal may flow (for the main-row search). */
function signalEdges(p: Part): [string, string][] {
  switch (p.kind) {
    case 'tube': return [[p.nodes.grid, p.nodes.plate]];
    // either end may carry the signal (a volume pot has end 1 at ground, common practice)
    case 'pot': return [[p.nodes[0], p.nodes[1]], [p.nodes[1], p.nodes[0]], [p.nodes[2], p.nodes[1]], [p.nodes[1], p.nodes[2]], [p.nodes[0], p.nodes[2]], [p.nodes[2], p.nodes[0]]];
    default: return [[p.nodes[0], p.nodes[1]], [p.nodes[1], p.nodes[0]]];
  }
}

/** Shortest path input -> output through non-rail nodes: the nodes and the linking parts. */
export function mainPath(d: Design, rails: ReadonlySet<string>): { nodes: string[]; links: Part[] } | null {
  const prev = new Map<string, { from: string; part: Part }>();
  const queue = [d.input.node];
  const seen = new Set(queue);
  while (queue.length) {
    const n = queue.shift()!;
    if (n === d.output.node) break;
    for (const p of d.parts) {
      for (const [a, b] of signalEdges(p)) {
        if (a !== n || seen.has(b) || rails.has(b)) continue;
        seen.add(b);
        prev.set(b, { from: n, part: p });
        queue.push(b);
      }
    }
  }
  if (!seen.has(d.output.node)) return null;
  const nodes = [d.output.node];
  const links: Part[] = [];
  let at = d.output.node;
  while (at !== d.input.node) {
    const step = prev.get(at)!;
    links.unshift(step.part);
    nodes.unshift(step.from);
    at = step.from;
  }
  return { nodes, links };
}

function otherEnd(p: Part, n: string): string | null {
  if (p.kind === 'tube') return null;
  if (p.kind === 'pot') return p.nodes[1] === p.nodes[2] && p.nodes[0] === n ? p.nodes[2] : p.nodes[0] === n ? p.nodes[2] : p.nodes[2] === n ? p.nodes[0] : null;
  return p.nodes[0] === n ? p.nodes[1] : p.nodes[1] === n ? p.nodes[0] : null;
}

const isTwoTerminalPot = (p: PotPart) => p.nodes[1] === p.nodes[2];

export function layoutDesign(d: Design): SchematicLayout {
  const rails = railNodes(d);
  const b: Builder = { parts: [], wires: [], flags: [], dots: [], nodeLabels: [], placed: new Set(), drawnNodes: new Set() };
  const path = mainPath(d, rails);
  const mainNodes = new Set(path?.nodes ?? []);
  const railText = (n: string) => (n === d.supply.node ? 'B+' : n);

  /** Flag the end of a terminal that lands on a rail or an already-drawn / main node. */
  const endFlag = (at: Point, n: string, dir: Flag['dir']): boolean => {
    if (n === GROUND) { b.flags.push({ at, kind: 'ground', text: '', dir }); return true; }
    if (rails.has(n)) { b.flags.push({ at, kind: 'rail', text: railText(n), dir }); return true; }
    if (mainNodes.has(n) || b.drawnNodes.has(n)) { b.flags.push({ at, kind: 'net', text: n, dir }); return true; }
    return false;
  };

  /**
   * Hang the unplaced parts of node n from a horizontal bus at height y starting at x,
   * going in direction dir (+1 down, -1 up). Returns the width used.
   */
  const hang = (n: string, x: number, y: number, dir: 1 | -1, filter: (p: Part) => boolean, onRow = false): number => {
    b.drawnNodes.add(n);
    const attached = d.parts.filter((p) => !b.placed.has(p.id) && p.kind !== 'tube' && partNodes(p).includes(n) && filter(p));
    // group parallel parts by their far end so they sit side by side
    const groups = new Map<string, Part[]>();
    for (const p of attached) {
      const o = p.kind === 'pot' && !isTwoTerminalPot(p) ? `pot:${p.id}` : otherEnd(p, n) ?? `?${p.id}`;
      groups.set(o, [...(groups.get(o) ?? []), p]);
    }
    let cx = x;
    const attachXs: number[] = [];
    for (const [far, group] of groups) {
      const startX = cx;
      const yEnd = y + dir * L;
      for (const p of group) {
        b.placed.add(p.id);
        attachXs.push(cx);
        const top: Point = [cx, y], bot: Point = [cx, yEnd];
        if (p.kind === 'pot' && !isTwoTerminalPot(p)) {
          const nearIs1 = p.nodes[0] === n;
          const farNode = nearIs1 ? p.nodes[2] : p.nodes[0];
          const wiper: Point = [cx + 22, y + (dir * L) / 2];
          b.parts.push({ id: p.id, kind: 'pot3', a: nearIs1 ? top : bot, b: nearIs1 ? bot : top, wiper });
          if (!endFlag(wiper, p.nodes[1], 'right')) b.flags.push({ at: wiper, kind: 'net', text: p.nodes[1], dir: 'right' });
          if (!endFlag(bot, farNode, dir > 0 ? 'down' : 'up')) b.flags.push({ at: bot, kind: 'net', text: farNode, dir: dir > 0 ? 'down' : 'up' });
          cx += SP;
          continue;
        }
        if (p.kind === 'tube') continue;
        const kind = p.kind === 'pot' ? 'pot2' : p.kind;
        const firstIsNear = p.nodes[0] === n;
        b.parts.push({ id: p.id, kind, a: firstIsNear ? top : bot, b: firstIsNear ? bot : top });
        cx += SP;
      }
      const farNode = far.startsWith('pot:') || far.startsWith('?') ? null : far;
      if (farNode !== null) {
        const fn = farNode;
        const lastX = cx - SP;
        if (endFlag([startX, yEnd], fn, dir > 0 ? 'down' : 'up')) {
          for (let k = 1; k < group.length; k++) b.flags.push({ at: [startX + k * SP, yEnd], kind: b.flags[b.flags.length - 1]!.kind, text: b.flags[b.flags.length - 1]!.text, dir: dir > 0 ? 'down' : 'up' });
        } else {
          // a side node: bus under the group, then its own parts below
          const busY = yEnd;
          if (group.length > 1) b.wires.push([[startX, busY], [lastX, busY]]);
          b.nodeLabels.push({ at: [startX + 4, busY + dir * 12], text: fn });
          const drop = busY + dir * 18;
          b.wires.push([[startX, busY], [startX, drop]]);
          const w = hang(fn, startX, drop, dir, () => true);
          cx = Math.max(cx, startX + w);
        }
      }
    }
    if (attachXs.length > 1) b.wires.push([[Math.min(...attachXs), y], [Math.max(...attachXs), y]]);
    if (onRow || attachXs.length > 1) for (const ax of attachXs) b.dots.push([ax, y]);
    return cx - x;
  };

  const Y0 = 0;
  let x = 0;
  if (path) {
    b.flags.push({ at: [x, Y0], kind: 'terminal', text: 'input', dir: 'left' });
    for (let i = 0; i < path.nodes.length; i++) {
      const n = path.nodes[i]!;
      const link = path.links[i];
      const segStart = x;
      b.drawnNodes.add(n);
      b.nodeLabels.push({ at: [x + 6, Y0 - 8], text: n });
      x += 24;
      // parts going to supply rails hang upward, the rest downward
      const isLink = (p: Part) => p === link;
      const goesUp = (p: Part) => { const o = otherEnd(p, n); return o !== null && o !== GROUND && rails.has(o); };
      const upW = hang(n, x, Y0, -1, (p) => !isLink(p) && goesUp(p), true);
      const downW = hang(n, x, Y0, 1, (p) => !isLink(p) && !goesUp(p), true);
      x += Math.max(upW, downW) + 8;
      if (!link) {
        b.wires.push([[segStart, Y0], [x, Y0]]);
        b.flags.push({ at: [x, Y0], kind: 'terminal', text: 'output', dir: 'right' });
        break;
      }
      b.placed.add(link.id);
      if (link.kind === 'tube') {
        const t = link as TubePart;
        const pentode = tubeType(t.type).kind === 'pentode';
        const tx = x + R + 16;
        const grid: Point = [tx - R, Y0];
        const plate: Point = [tx, Y0 - R];
        const cathode: Point = [tx, Y0 + R];
        const screen: Point | null = pentode ? [tx + R * 0.72, Y0 + R * 0.7] : null;
        b.parts.push({ id: t.id, kind: 'tube', centre: [tx, Y0], radius: R, pentode, grid, plate, cathode, screen });
        b.wires.push([[segStart, Y0], grid]);
        const downX = tx + R + 18;
        b.wires.push([plate, [tx, Y0 - R - 16], [downX, Y0 - R - 16], [downX, Y0]]);
        let right = downX;
        // cathode circuit
        let cw = 0;
        if (!endFlag([tx, Y0 + R + 6], t.nodes.cathode, 'down')) {
          const busY = Y0 + R + 22;
          b.wires.push([cathode, [tx, busY]]);
          b.nodeLabels.push({ at: [tx + 4, busY - 4], text: t.nodes.cathode });
          cw = hang(t.nodes.cathode, tx, busY, 1, () => true);
        } else {
          b.wires.push([cathode, [tx, Y0 + R + 6]]);
        }
        if (screen && t.nodes.screen) {
          const sx = Math.max(tx + cw, downX + 24);
          const sy = Y0 + R + 22;
          b.wires.push([screen, [sx, screen[1]], [sx, sy]]);
          b.nodeLabels.push({ at: [sx + 4, screen[1] - 4], text: t.nodes.screen });
          if (!endFlag([sx, sy], t.nodes.screen, 'down')) {
            const sw = hang(t.nodes.screen, sx, sy, 1, () => true);
            right = Math.max(right, sx + sw);
          }
        }
        right = Math.max(right, tx + cw);
        b.wires.push([[downX, Y0], [right + 8, Y0]]);
        x = right + 8;
      } else if (link.kind === 'pot' && !isTwoTerminalPot(link)) {
        // end1 on this node, wiper continues the row
        const px = x + 4;
        const wiper: Point = [px + 22, Y0 + L / 2];
        b.parts.push({ id: link.id, kind: 'pot3', a: [px, Y0], b: [px, Y0 + L], wiper });
        b.wires.push([[segStart, Y0], [px, Y0]]);
        b.dots.push([px, Y0]);
        const far = link.nodes[0] === n ? link.nodes[2] : link.nodes[0];
        if (!endFlag([px, Y0 + L], far, 'down')) b.flags.push({ at: [px, Y0 + L], kind: 'net', text: far, dir: 'down' });
        const upX = px + 44;
        b.wires.push([wiper, [upX, Y0 + L / 2], [upX, Y0]]);
        x = upX;
      } else {
        const a: Point = [x, Y0], e: Point = [x + L, Y0];
        const forward = link.kind === 'pot' ? link.nodes[0] === n : link.nodes[0] === n;
        const kind = link.kind === 'pot' ? 'pot2' : (link.kind as 'resistor' | 'capacitor' | 'switch');
        b.parts.push({ id: link.id, kind, a: forward ? a : e, b: forward ? e : a });
        b.wires.push([[segStart, Y0], a]);
        x += L;
      }
    }
  }

  // whatever is left (supply filter, parts off any path): bottom row with labels on both ends
  const placedBottom = Math.max(0, ...b.parts.flatMap(partPoints).map((p) => p[1])) + 90;
  let fx = 0;
  for (const p of d.parts) {
    if (b.placed.has(p.id)) continue;
    b.placed.add(p.id);
    const top: Point = [fx, placedBottom], bot: Point = [fx, placedBottom + L];
    const label = (at: Point, n: string, dir: Flag['dir']) => {
      if (n === GROUND) b.flags.push({ at, kind: 'ground', text: '', dir });
      else b.flags.push({ at, kind: rails.has(n) ? 'rail' : 'net', text: rails.has(n) ? railText(n) : n, dir });
    };
    if (p.kind === 'tube') {
      const c: Point = [fx + R + 10, placedBottom + L / 2];
      const pentode = tubeType(p.type).kind === 'pentode';
      const grid: Point = [c[0] - R, c[1]], plate: Point = [c[0], c[1] - R], cathode: Point = [c[0], c[1] + R];
      const screen: Point | null = pentode ? [c[0] + R * 0.72, c[1] + R * 0.7] : null;
      b.parts.push({ id: p.id, kind: 'tube', centre: c, radius: R, pentode, grid, plate, cathode, screen });
      label(grid, p.nodes.grid, 'left'); label(plate, p.nodes.plate, 'up'); label(cathode, p.nodes.cathode, 'down');
      if (screen && p.nodes.screen) label(screen, p.nodes.screen, 'right');
      fx += 2 * R + 70;
    } else if (p.kind === 'pot' && !isTwoTerminalPot(p)) {
      const wiper: Point = [fx + 22, placedBottom + L / 2];
      b.parts.push({ id: p.id, kind: 'pot3', a: top, b: bot, wiper });
      label(top, p.nodes[0], 'up'); label(bot, p.nodes[2], 'down'); label(wiper, p.nodes[1], 'right');
      fx += SP + 30;
    } else {
      const kind = p.kind === 'pot' ? 'pot2' : p.kind;
      b.parts.push({ id: p.id, kind, a: top, b: bot });
      label(top, p.nodes[0], 'up');
      label(bot, p.kind === 'pot' ? p.nodes[2] : p.nodes[1], 'down');
      fx += SP + 20;
    }
  }

  // normalise to positive coordinates with a margin
  const pts = [...b.parts.flatMap(partPoints), ...b.wires.flat(), ...b.flags.map((f) => f.at)];
  const minX = Math.min(...pts.map((p) => p[0])) - MARGIN - 30;
  const minY = Math.min(...pts.map((p) => p[1])) - MARGIN;
  const maxX = Math.max(...pts.map((p) => p[0])) + MARGIN + 50;
  const maxY = Math.max(...pts.map((p) => p[1])) + MARGIN;
  const sh = (p: Point): Point => [p[0] - minX, p[1] - minY];
  return {
    width: maxX - minX,
    height: maxY - minY,
    parts: b.parts.map((p) => shiftPart(p, sh)),
    wires: b.wires.map((w) => w.map(sh)),
    flags: b.flags.map((f) => ({ ...f, at: sh(f.at) })),
    dots: b.dots.map(sh),
    nodeLabels: b.nodeLabels.map((l) => ({ ...l, at: sh(l.at) })),
  };
}

export function partPoints(p: PlacedPart): Point[] {
  switch (p.kind) {
    case 'tube': return [p.grid, p.plate, p.cathode, ...(p.screen ? [p.screen] : []), [p.centre[0] - p.radius, p.centre[1] - p.radius], [p.centre[0] + p.radius, p.centre[1] + p.radius]];
    case 'pot3': return [p.a, p.b, p.wiper];
    default: return [p.a, p.b];
  }
}

function shiftPart(p: PlacedPart, sh: (p: Point) => Point): PlacedPart {
  switch (p.kind) {
    case 'tube': return { ...p, centre: sh(p.centre), grid: sh(p.grid), plate: sh(p.plate), cathode: sh(p.cathode), screen: p.screen ? sh(p.screen) : null };
    case 'pot3': return { ...p, a: sh(p.a), b: sh(p.b), wiper: sh(p.wiper) };
    default: return { ...p, a: sh(p.a), b: sh(p.b) };
  }
}

/** Axis-aligned box around a placed part's symbol (for hit testing and overlap checks). */
export function partBox(p: PlacedPart): { x0: number; y0: number; x1: number; y1: number } {
  if (p.kind === 'tube') return { x0: p.centre[0] - p.radius, y0: p.centre[1] - p.radius, x1: p.centre[0] + p.radius, y1: p.centre[1] + p.radius };
  const pts = partPoints(p);
  const xs = pts.map((q) => q[0]), ys = pts.map((q) => q[1]);
  const pad = 9;
  // the symbol body sits between the terminals, leaving 12 px leads at each end
  const horiz = p.a[1] === p.b[1];
  return horiz
    ? { x0: Math.min(...xs) + 12, y0: Math.min(...ys) - pad, x1: Math.max(...xs) - 12, y1: Math.max(...ys) + pad }
    : { x0: Math.min(...xs) - pad, y0: Math.min(...ys) + 12, x1: Math.max(...xs) + (p.kind === 'pot3' ? 0 : pad), y1: Math.max(...ys) - 12 };
}
