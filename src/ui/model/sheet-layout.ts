// Schematic layout for any design: each part is a box holding its symbol, its labels and the
// flags of the leads that go to a rail (B+ and decoupled supply nodes at the top of the part,
// ground at the bottom); the remaining nets are wires laid out and routed orthogonally by ELK's
// layered algorithm (elkjs), signal left to right. Labels live inside the boxes and ELK routes
// wires around boxes, so no label sits on a wire. User nudges (design.sheet.positions) move a
// box after layout; its wires are then re-routed with simple orthogonal paths. Pure: no DOM.
import type { ElkExtendedEdge, ElkNode, ElkPort } from 'elkjs/lib/elk-api.js';
import { GROUND, type Design, type Part } from '../../dsp/circuit/design.ts';
import { tubeType } from '../../dsp/tubes/library.ts';
import { terminalsOf } from '../../dsp/circuit/edit.ts';
import { formatValue } from '../../dsp/parts/values.ts';

export type Point = readonly [number, number];
export type Side = 'N' | 'S' | 'E' | 'W';

/** Text on the sheet with its box (for overlap checks): x, y is the baseline start. */
export interface SheetText {
  readonly x: number;
  readonly y: number;
  readonly text: string;
  readonly cls: 'part-id' | 'part-value' | 'rail-text' | 'term-text' | 'sym-plus';
  readonly width: number;
}
export interface SheetFlag {
  readonly at: Point;
  readonly kind: 'ground' | 'rail';
  readonly side: Side;
  readonly text: string;
}

export type SymbolKind = 'resistor' | 'capacitor' | 'switch' | 'pot2' | 'pot3' | 'triode' | 'pentode';

export interface PlacedSymbol {
  readonly id: string;
  readonly symbol: SymbolKind;
  /** Box on the sheet (symbol, labels and flags inside). */
  readonly x: number;
  readonly y: number;
  readonly width: number;
  readonly height: number;
  /** Symbol geometry in sheet coordinates: a two-terminal runs from a to b; tubes have a centre. */
  readonly a: Point;
  readonly b: Point;
  readonly wiper?: Point;
  readonly centre?: Point;
  readonly polarized: boolean;
  readonly closed: boolean;
  /** Lead polylines from the symbol to each terminal point (in sheet coordinates). */
  readonly leads: readonly (readonly Point[])[];
  /** Where each terminal meets a wire or a flag. */
  readonly terminals: readonly { readonly name: string; readonly node: string; readonly at: Point; readonly flagged: boolean }[];
  readonly flags: readonly SheetFlag[];
  readonly texts: readonly SheetText[];
}

export interface SheetLayout {
  readonly width: number;
  readonly height: number;
  readonly parts: readonly PlacedSymbol[];
  /** The input and output terminals. */
  readonly ports: readonly { readonly at: Point; readonly text: SheetText; readonly kind: 'input' | 'output' }[];
  readonly wires: readonly { readonly net: string; readonly points: readonly Point[] }[];
  readonly dots: readonly Point[];
}

const CHAR_WIDTH = 7.2; // 12 px monospace/sans text, generous (measured in Chromium: about 6.6-7.0)
const LINE = 14;
const LEAD = 60;
const R = 30; // tube envelope radius
const FLAG_UP = 26,
  FLAG_DOWN = 18;
const textWidth = (s: string) => Math.ceil(s.length * CHAR_WIDTH) + 2;

export function valueText(p: Part): string {
  switch (p.kind) {
    case 'resistor':
      return formatValue(p.ohms, 'ohms', { style: 'rkm' });
    case 'capacitor':
      return `${formatValue(p.farads, 'farads')}F`;
    case 'pot':
      return `${formatValue(p.ohms, 'ohms', { style: 'rkm' })} ${p.taper === 'log' ? 'log' : p.taper === 'linear' ? 'lin' : 'rev'}`;
    case 'switch':
      return p.closed ? 'closed' : 'open';
    case 'tube':
      return `${p.type}${p.sample === 1 ? '' : p.sample > 1 ? ' strong' : ' weak'}`;
  }
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
      if (decoupled) {
        rails.add(cand);
        grew = true;
      }
    }
  }
  return rails;
}

/** Hop distance of every node from the input over non-rail nodes (for left-to-right orientation). */
function distances(d: Design, rails: ReadonlySet<string>): Map<string, number> {
  const dist = new Map<string, number>([[d.input.node, 0]]);
  const queue = [d.input.node];
  while (queue.length) {
    const n = queue.shift()!;
    for (const p of d.parts) {
      const ns = terminalsOf(p).map((t) => t.node);
      if (!ns.includes(n)) continue;
      for (const m of ns)
        if (!dist.has(m) && !rails.has(m)) {
          dist.set(m, dist.get(n)! + 1);
          queue.push(m);
        }
    }
  }
  return dist;
}

interface LocalTerminal {
  name: string;
  node: string;
  at: [number, number];
  side: Side;
  lead: [number, number][];
}
interface LocalShape {
  symbol: SymbolKind;
  width: number;
  height: number;
  a: [number, number];
  b: [number, number];
  wiper?: [number, number];
  centre?: [number, number];
  terminals: LocalTerminal[];
  texts: SheetText[];
}

/** Symbol and labels of one part in local coordinates, before flags. */
function shapeOf(p: Part, rails: ReadonlySet<string>, dist: ReadonlyMap<string, number>, supply: string): LocalShape {
  const id = p.id,
    value = valueText(p);
  const polarized = p.kind === 'capacitor' && p.polarized === true;
  const labelW = Math.max(textWidth(id), textWidth(value));
  const isRail = (n: string) => rails.has(n);
  const rank = (n: string) => (n === GROUND ? 3 : n === supply ? 0 : isRail(n) ? 1 : 2);
  if (p.kind === 'tube') {
    const pentode = tubeType(p.type).kind === 'pentode';
    const cx = 20 + R,
      cy = 44;
    const lx = cx + R + 6;
    const width = lx + labelW + 4;
    const terminals: LocalTerminal[] = [
      {
        name: 'grid',
        node: p.nodes.grid,
        at: [0, cy],
        side: 'W',
        lead: [
          [cx - R, cy],
          [0, cy],
        ],
      },
      {
        name: 'plate',
        node: p.nodes.plate,
        at: [width, cy - 40],
        side: 'E',
        lead: [
          [cx, cy - R],
          [cx, cy - 40],
          [width, cy - 40],
        ],
      },
      {
        name: 'cathode',
        node: p.nodes.cathode,
        at: [cx, cy + R + 20],
        side: 'S',
        lead: [
          [cx, cy + R],
          [cx, cy + R + 20],
        ],
      },
    ];
    if (pentode && p.nodes.screen !== undefined)
      terminals.push({
        name: 'screen',
        node: p.nodes.screen,
        at: [width, cy + 16],
        side: 'E',
        lead: [
          [cx + R * 0.72, cy + 16],
          [width, cy + 16],
        ],
      });
    // a plate straight on a rail: its flag goes above the envelope
    const plate = terminals[1]!;
    if (isRail(plate.node)) {
      plate.at = [cx, cy - 40];
      plate.side = 'N';
      plate.lead = [
        [cx, cy - R],
        [cx, cy - 40],
      ];
    }
    return {
      symbol: pentode ? 'pentode' : 'triode',
      width,
      height: cy + R + 20,
      a: [cx, cy - R],
      b: [cx, cy + R],
      centre: [cx, cy],
      terminals,
      texts: [
        { x: lx, y: cy - 14, text: id, cls: 'part-id', width: textWidth(id) },
        { x: lx, y: cy, text: value, cls: 'part-value', width: textWidth(value) },
      ],
    };
  }
  if (p.kind === 'pot' && p.nodes[1] !== p.nodes[2]) {
    // three-terminal: end 1 on top, end 2 below, wiper to the right (flip when end 2 is nearer B+)
    const flip = rank(p.nodes[2]) < rank(p.nodes[0]);
    const top = flip ? 2 : 0,
      bot = flip ? 0 : 2;
    const x = 10,
      width = x + 30 + labelW + 4;
    return {
      symbol: 'pot3',
      width,
      height: LEAD,
      a: [x, 0],
      b: [x, LEAD],
      wiper: [width, LEAD / 2],
      terminals: [
        { name: flip ? 'end 2' : 'end 1', node: p.nodes[top], at: [x, 0], side: 'N', lead: [] },
        {
          name: 'wiper',
          node: p.nodes[1],
          at: [width, LEAD / 2],
          side: 'E',
          lead: [
            [x + 9, LEAD / 2],
            [width, LEAD / 2],
          ],
        },
        { name: flip ? 'end 1' : 'end 2', node: p.nodes[bot], at: [x, LEAD], side: 'S', lead: [] },
      ],
      texts: [
        { x: x + 22, y: 14, text: id, cls: 'part-id', width: textWidth(id) },
        { x: x + 22, y: LEAD - 6, text: value, cls: 'part-value', width: textWidth(value) },
      ],
    };
  }
  const n0 = p.nodes[0],
    n1 = p.kind === 'pot' ? p.nodes[2] : p.nodes[1];
  const symbol: SymbolKind = p.kind === 'pot' ? 'pot2' : p.kind;
  const names = terminalsOf(p).map((t) => t.name);
  const name0 = names[0]!,
    name1 = p.kind === 'pot' ? 'end 2' : names[1]!;
  if (isRail(n0) || isRail(n1)) {
    // vertical: the rail nearer B+ on top, ground at the bottom
    const firstTop = rank(n0) <= rank(n1);
    const x = 20,
      width = x + 18 + labelW + 4;
    const topNode = firstTop ? n0 : n1,
      botNode = firstTop ? n1 : n0;
    // the + of an electrolytic: left of its + plate, clear of the lead and the labels
    const plus: SheetText[] = polarized ? [{ x: x - 17, y: LEAD / 2 + (firstTop ? -8 : 14), text: '+', cls: 'sym-plus', width: textWidth('+') }] : [];
    return {
      symbol,
      width,
      height: LEAD,
      a: firstTop ? [x, 0] : [x, LEAD],
      b: firstTop ? [x, LEAD] : [x, 0],
      terminals: [
        { name: firstTop ? name0 : name1, node: topNode, at: [x, 0], side: 'N', lead: [] },
        { name: firstTop ? name1 : name0, node: botNode, at: [x, LEAD], side: 'S', lead: [] },
      ],
      texts: [
        { x: x + 18, y: LEAD / 2 - 3, text: id, cls: 'part-id', width: textWidth(id) },
        { x: x + 18, y: LEAD / 2 + 11, text: value, cls: 'part-value', width: textWidth(value) },
        ...plus,
      ],
    };
  }
  // horizontal: the end nearer the input on the left; labels above the symbol
  const firstLeft = (dist.get(n0) ?? 99) <= (dist.get(n1) ?? 99);
  const width = Math.max(LEAD, labelW + 4),
    y = 2 * LINE + 12;
  const x0 = (width - LEAD) / 2;
  // the + below the lead, beside the + plate
  const plusX = x0 + LEAD / 2 + (firstLeft ? -14 : 5);
  const plus: SheetText[] = polarized ? [{ x: plusX, y: y + 17, text: '+', cls: 'sym-plus', width: textWidth('+') }] : [];
  return {
    symbol,
    width,
    height: y + (polarized ? 22 : 14),
    a: firstLeft ? [x0, y] : [x0 + LEAD, y],
    b: firstLeft ? [x0 + LEAD, y] : [x0, y],
    terminals: [
      {
        name: firstLeft ? name0 : name1,
        node: firstLeft ? n0 : n1,
        at: [0, y],
        side: 'W',
        lead: [
          [x0, y],
          [0, y],
        ],
      },
      {
        name: firstLeft ? name1 : name0,
        node: firstLeft ? n1 : n0,
        at: [width, y],
        side: 'E',
        lead: [
          [x0 + LEAD, y],
          [width, y],
        ],
      },
    ],
    texts: [
      { x: (width - textWidth(id)) / 2, y: LINE - 2, text: id, cls: 'part-id', width: textWidth(id) },
      { x: (width - textWidth(value)) / 2, y: 2 * LINE - 2, text: value, cls: 'part-value', width: textWidth(value) },
      ...plus,
    ],
  };
}

/** Grow the shape so each flagged terminal's flag fits inside; returns the shape and its flags. */
function withFlags(s: LocalShape, rails: ReadonlySet<string>, supply: string): { shape: LocalShape; flags: SheetFlag[]; flagged: Set<string> } {
  const flagged = new Set<string>();
  const grow = { N: 0, S: 0, E: 0, W: 0 };
  for (const t of s.terminals) {
    if (!rails.has(t.node)) continue;
    flagged.add(t.name);
    const text = t.node === GROUND ? '' : t.node === supply ? 'B+' : t.node;
    const ext = t.side === 'N' ? FLAG_UP : t.side === 'S' ? (t.node === GROUND ? FLAG_DOWN : FLAG_UP) : 14 + textWidth(text);
    grow[t.side] = Math.max(grow[t.side], ext);
  }
  const dx = grow.W,
    dy = grow.N;
  const mv = (p: [number, number]): [number, number] => [p[0] + dx, p[1] + dy];
  const width = s.width + grow.W + grow.E,
    height = s.height + grow.N + grow.S;
  const flags: SheetFlag[] = [];
  const terminals = s.terminals.map((t): LocalTerminal => {
    const at = mv(t.at);
    const lead = t.lead.map(mv);
    if (rails.has(t.node)) {
      flags.push({ at, kind: t.node === GROUND ? 'ground' : 'rail', side: t.side, text: t.node === GROUND ? '' : t.node === supply ? 'B+' : t.node });
      return { ...t, at, lead };
    }
    // an unflagged terminal's lead reaches the (grown) box edge
    const edge: [number, number] = t.side === 'N' ? [at[0], 0] : t.side === 'S' ? [at[0], height] : t.side === 'W' ? [0, at[1]] : [width, at[1]];
    const from = lead.length > 0 ? lead[0]! : at;
    return { ...t, at: edge, lead: [from, ...(lead.length > 1 ? lead.slice(1, -1) : []), edge] };
  });
  return {
    shape: {
      ...s,
      width,
      height,
      terminals,
      a: mv(s.a),
      b: mv(s.b),
      ...(s.wiper ? { wiper: mv(s.wiper) } : {}),
      ...(s.centre ? { centre: mv(s.centre) } : {}),
      texts: s.texts.map((t) => ({ ...t, x: t.x + dx, y: t.y + dy })),
    },
    flags,
    flagged,
  };
}

/** Something that runs ELK on a graph: the bundled one in the calling thread, or one in a worker. */
export type ElkLayout = (graph: ElkNode) => Promise<ElkNode>;

let bundled: Promise<ElkLayout> | null = null;
/** ELK in the calling thread, loaded on first use (a large module: kept out of the first load). */
export function bundledElk(): Promise<ElkLayout> {
  bundled ??= import('elkjs/lib/elk.bundled.js').then(({ default: ELK }) => {
    const elk = new ELK();
    return (g: ElkNode) => elk.layout(g);
  });
  return bundled;
}

/** Lay out a design's schematic (async: ELK runs its layered algorithm). */
export async function layoutSheet(d: Design, layout?: ElkLayout): Promise<SheetLayout> {
  const rails = railNodes(d);
  const dist = distances(d, rails);
  const shapes = new Map<string, { shape: LocalShape; flags: SheetFlag[]; flagged: Set<string> }>();
  for (const p of d.parts) shapes.set(p.id, withFlags(shapeOf(p, rails, dist, d.supply.node), rails, d.supply.node));
  const sideName: Record<Side, string> = { N: 'NORTH', S: 'SOUTH', E: 'EAST', W: 'WEST' };
  const children: ElkNode[] = [];
  const portsOfNet = new Map<string, { port: string; side: Side; dist: number }[]>();
  const addToNet = (net: string, port: string, side: Side) => {
    const list = portsOfNet.get(net) ?? [];
    list.push({ port, side, dist: dist.get(net) ?? 99 });
    portsOfNet.set(net, list);
  };
  for (const [id, { shape, flagged }] of shapes) {
    const ports: ElkPort[] = [];
    for (const t of shape.terminals) {
      if (flagged.has(t.name)) continue;
      const pid = `${id}:${t.name}`;
      ports.push({ id: pid, x: t.at[0], y: t.at[1], width: 0, height: 0, layoutOptions: { 'elk.port.side': sideName[t.side] } });
      addToNet(t.node, pid, t.side);
    }
    children.push({ id, width: shape.width, height: shape.height, ports, layoutOptions: { 'elk.portConstraints': 'FIXED_POS' } });
  }
  const io: { id: string; node: string; kind: 'input' | 'output' }[] = [
    { id: '@input', node: d.input.node, kind: 'input' },
    { id: '@output', node: d.output.node, kind: 'output' },
  ];
  for (const t of io) {
    if (rails.has(t.node)) continue;
    const side: Side = t.kind === 'input' ? 'E' : 'W';
    const pid = `${t.id}:p`;
    children.push({
      id: t.id,
      width: 56,
      height: 20,
      ports: [{ id: pid, x: side === 'E' ? 56 : 0, y: 10, width: 0, height: 0, layoutOptions: { 'elk.port.side': sideName[side] } }],
      layoutOptions: { 'elk.portConstraints': 'FIXED_POS', 'elk.layered.layering.layerConstraint': t.kind === 'input' ? 'FIRST' : 'LAST' },
    });
    addToNet(t.node, pid, side);
  }
  const edges: ElkExtendedEdge[] = [];
  for (const [net, ports] of portsOfNet) {
    if (ports.length < 2) continue;
    // the driving port: an output-side (east) port nearest the input, else the nearest one
    const sorted = [...ports].sort((p, q) => (p.side === 'E' ? 0 : 1) - (q.side === 'E' ? 0 : 1) || p.dist - q.dist);
    const src = ports.find((p) => p.port === '@input:p') ?? sorted[0]!;
    for (const p of ports) if (p !== src) edges.push({ id: `${net}|${src.port}|${p.port}`, sources: [src.port], targets: [p.port] });
  }
  const graph: ElkNode = {
    id: 'sheet',
    layoutOptions: {
      'elk.algorithm': 'layered',
      'elk.direction': 'RIGHT',
      'elk.edgeRouting': 'ORTHOGONAL',
      'elk.spacing.nodeNode': '28',
      'elk.layered.spacing.nodeNodeBetweenLayers': '36',
      'elk.spacing.edgeNode': '16',
      'elk.spacing.edgeEdge': '10',
      'elk.layered.spacing.edgeNodeBetweenLayers': '16',
      'elk.padding': '[top=24,left=24,bottom=24,right=24]',
      'elk.layered.nodePlacement.strategy': 'NETWORK_SIMPLEX',
      'elk.layered.crossingMinimization.semiInteractive': 'false',
      'elk.layered.considerModelOrder.strategy': 'NODES_AND_EDGES',
      'elk.separateConnectedComponents': 'false',
      'elk.layered.wrapping.strategy': 'MULTI_EDGE',
      'elk.aspectRatio': '1.8',
    },
    children,
    edges,
  };
  const out = await (layout ?? (await bundledElk()))(graph);
  const nudges = d.sheet?.positions ?? {};
  const boxAt = new Map<string, Point>();
  for (const c of out.children ?? []) {
    const n = nudges[c.id] ?? [0, 0];
    boxAt.set(c.id, [(c.x ?? 0) + n[0], (c.y ?? 0) + n[1]]);
  }
  const parts: PlacedSymbol[] = [];
  for (const p of d.parts) {
    const { shape, flags, flagged } = shapes.get(p.id)!;
    const [ox, oy] = boxAt.get(p.id) ?? [0, 0];
    const m = (q: readonly [number, number]): Point => [q[0] + ox, q[1] + oy];
    parts.push({
      id: p.id,
      symbol: shape.symbol,
      x: ox,
      y: oy,
      width: shape.width,
      height: shape.height,
      a: m(shape.a),
      b: m(shape.b),
      ...(shape.wiper ? { wiper: m(shape.wiper) } : {}),
      ...(shape.centre ? { centre: m(shape.centre) } : {}),
      polarized: p.kind === 'capacitor' && p.polarized === true,
      closed: p.kind === 'switch' && p.closed,
      leads: shape.terminals.filter((t) => t.lead.length > 1).map((t) => t.lead.map(m)),
      terminals: shape.terminals.map((t) => ({ name: t.name, node: t.node, at: m(t.at), flagged: flagged.has(t.name) })),
      flags: flags.map((f) => ({ ...f, at: m(f.at) })),
      texts: shape.texts.map((t) => ({ ...t, x: t.x + ox, y: t.y + oy })),
    });
  }
  const ports = io
    .filter((t) => boxAt.has(t.id))
    .map((t) => {
      const [x, y] = boxAt.get(t.id)!;
      const at: Point = t.kind === 'input' ? [x + 56, y + 10] : [x, y + 10];
      const text = t.kind === 'input' ? 'input' : 'output';
      return {
        kind: t.kind,
        at,
        text: { x: t.kind === 'input' ? x + 56 - 8 - textWidth(text) : x + 8, y: y + 14, text, cls: 'term-text' as const, width: textWidth(text) },
      };
    });
  // wires: ELK's routes, or a plain orthogonal path where a nudge moved one end
  const portPoint = (pid: string): Point => {
    const [owner, name] = [pid.slice(0, pid.indexOf(':')), pid.slice(pid.indexOf(':') + 1)];
    if (owner.startsWith('@')) return ports.find((p) => `@${p.kind}` === owner)!.at;
    return parts.find((p) => p.id === owner)!.terminals.find((t) => t.name === name)!.at;
  };
  const wires: { net: string; points: Point[] }[] = [];
  const dots: Point[] = [];
  const nudged = (pid: string) => {
    const o = pid.slice(0, pid.indexOf(':'));
    const n = nudges[o];
    return n !== undefined && (n[0] !== 0 || n[1] !== 0);
  };
  for (const e of out.edges ?? []) {
    const [net, s, t] = e.id.split('|') as [string, string, string];
    if (nudged(s) || nudged(t)) {
      const a = portPoint(s),
        b = portPoint(t),
        mx = (a[0] + b[0]) / 2;
      wires.push({ net, points: [a, [mx, a[1]], [mx, b[1]], b] });
      continue;
    }
    for (const sec of e.sections ?? []) {
      wires.push({
        net,
        points: [[sec.startPoint.x, sec.startPoint.y], ...(sec.bendPoints ?? []).map((q): Point => [q.x, q.y]), [sec.endPoint.x, sec.endPoint.y]],
      });
    }
    for (const j of (e as { junctionPoints?: { x: number; y: number }[] }).junctionPoints ?? []) dots.push([j.x, j.y]);
  }
  // the sheet covers every box (a nudge may move one beyond ELK's bounds)
  let w = out.width ?? 0,
    h = out.height ?? 0,
    minX = 0,
    minY = 0;
  for (const p of parts) {
    w = Math.max(w, p.x + p.width + 24);
    h = Math.max(h, p.y + p.height + 24);
    minX = Math.min(minX, p.x - 24);
    minY = Math.min(minY, p.y - 24);
  }
  const sx = -minX,
    sy = -minY;
  if (sx === 0 && sy === 0) return { width: w, height: h, parts, ports, wires, dots };
  const sh = (q: Point): Point => [q[0] + sx, q[1] + sy];
  return {
    width: w + sx,
    height: h + sy,
    parts: parts.map((p) => ({
      ...p,
      x: p.x + sx,
      y: p.y + sy,
      a: sh(p.a),
      b: sh(p.b),
      ...(p.wiper ? { wiper: sh(p.wiper) } : {}),
      ...(p.centre ? { centre: sh(p.centre) } : {}),
      leads: p.leads.map((l) => l.map(sh)),
      terminals: p.terminals.map((t) => ({ ...t, at: sh(t.at) })),
      flags: p.flags.map((f) => ({ ...f, at: sh(f.at) })),
      texts: p.texts.map((t) => ({ ...t, x: t.x + sx, y: t.y + sy })),
    })),
    ports: ports.map((p) => ({ ...p, at: sh(p.at), text: { ...p.text, x: p.text.x + sx, y: p.text.y + sy } })),
    wires: wires.map((x) => ({ ...x, points: x.points.map(sh) })),
    dots: dots.map(sh),
  };
}
