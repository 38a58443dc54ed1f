// The current design as a schematic (IEC 60617-style symbols: rectangular resistor, two-plate
// capacitor, potentiometer as a rectangle with a wiper arrow, tube as an envelope circle with
// plate bar, dashed grids and cathode). Each part is a button.
import { useMemo, type KeyboardEvent, type ReactElement } from 'react';
import type { Design, Part } from '../dsp/circuit/design.ts';
import { formatValue } from '../dsp/parts/values.ts';
import { layoutDesign, type Flag, type PlacedPart, type Point } from './model/layout.ts';

export function partValueText(p: Part): string {
  switch (p.kind) {
    case 'resistor': return formatValue(p.ohms, 'ohms', { style: 'rkm' });
    case 'capacitor': return `${formatValue(p.farads, 'farads')}F`;
    case 'pot': return `${formatValue(p.ohms, 'ohms', { style: 'rkm' })} ${p.taper === 'log' ? 'log' : p.taper === 'linear' ? 'lin' : 'rev'}`;
    case 'switch': return p.closed ? 'closed' : 'open';
    case 'tube': return `${p.type}${p.sample === 1 ? '' : p.sample > 1 ? ' strong' : ' weak'}`;
  }
}

const pts = (ps: readonly Point[]) => ps.map((p) => `${p[0]},${p[1]}`).join(' ');

function TwoTerminal({ kind, a, b, polarized, closed }: { kind: string; a: Point; b: Point; polarized: boolean; closed: boolean }): ReactElement {
  const horiz = a[1] === b[1];
  const cx = (a[0] + b[0]) / 2, cy = (a[1] + b[1]) / 2;
  const rot = horiz ? 0 : 90;
  const len = Math.hypot(b[0] - a[0], b[1] - a[1]);
  const h = len / 2;
  // drawn along +x around the centre, then rotated into place
  let body: ReactElement;
  if (kind === 'resistor' || kind === 'pot2') {
    body = (
      <>
        <line x1={-h} y1={0} x2={-13} y2={0} /><line x1={13} y1={0} x2={h} y2={0} />
        <rect x={-13} y={-5.5} width={26} height={11} className="sym-body" />
        {kind === 'pot2' && <><line x1={-12} y1={10} x2={12} y2={-10} /><polygon points="12,-10 5,-8 10,-3" className="sym-fill" /></>}
      </>
    );
  } else if (kind === 'capacitor') {
    body = (
      <>
        <line x1={-h} y1={0} x2={-3.5} y2={0} /><line x1={3.5} y1={0} x2={h} y2={0} />
        <line x1={-3.5} y1={-11} x2={-3.5} y2={11} className="sym-plate" />
        {polarized ? <path d="M 6.5 -11 Q 2.5 0 6.5 11" className="sym-plate" fill="none" /> : <line x1={3.5} y1={-11} x2={3.5} y2={11} className="sym-plate" />}
        {polarized && <text x={-12} y={-12} className="sym-plus">+</text>}
      </>
    );
  } else {
    body = (
      <>
        <line x1={-h} y1={0} x2={-10} y2={0} /><line x1={10} y1={0} x2={h} y2={0} />
        <circle cx={-10} cy={0} r={2} className="sym-fill" /><circle cx={10} cy={0} r={2} className="sym-fill" />
        {closed ? <line x1={-10} y1={0} x2={10} y2={-2} /> : <line x1={-10} y1={0} x2={9} y2={-10} />}
      </>
    );
  }
  const flip = horiz ? (a[0] > b[0] ? 180 : 0) : (a[1] > b[1] ? 180 : 0);
  return <g transform={`translate(${cx},${cy}) rotate(${rot + flip})`}>{body}</g>;
}

function Symbol({ placed, part }: { placed: PlacedPart; part: Part }): ReactElement {
  if (placed.kind === 'tube') {
    const [x, y] = placed.centre, r = placed.radius;
    const gy = placed.pentode ? y - 2 : y;
    return (
      <g>
        <circle cx={x} cy={y} r={r} className="sym-body" />
        <line x1={x - 12} y1={y - 15} x2={x + 12} y2={y - 15} className="sym-plate" />
        <line x1={x} y1={y - r} x2={x} y2={y - 15} />
        <line x1={x - 14} y1={gy} x2={x + 14} y2={gy} strokeDasharray="3 3" />
        <line x1={x - r} y1={y} x2={x - 14} y2={gy} />
        {placed.pentode && placed.screen && (
          <>
            <line x1={x - 14} y1={y - 8} x2={x + 14} y2={y - 8} strokeDasharray="3 3" />
            <polyline points={pts([[x + 14, y - 8], [x + 19, y - 8], [x + 19, y + 14], placed.screen])} fill="none" />
            <line x1={x - 14} y1={y + 4} x2={x + 14} y2={y + 4} strokeDasharray="2 3" />
            <polyline points={pts([[x - 14, y + 4], [x - 18, y + 4], [x - 18, y + 16], [x - 10, y + 16]])} fill="none" />
          </>
        )}
        <polyline points={pts([[x - 10, y + 19], [x - 10, y + 14], [x + 10, y + 14], [x + 10, y + 19]])} fill="none" className="sym-plate" />
        <line x1={x} y1={y + 14} x2={x} y2={y + r} />
      </g>
    );
  }
  if (placed.kind === 'pot3') {
    const { a, b, wiper } = placed;
    const cx = a[0], cy = (a[1] + b[1]) / 2;
    const top = Math.min(a[1], b[1]), bot = Math.max(a[1], b[1]);
    return (
      <g>
        <line x1={cx} y1={top} x2={cx} y2={cy - 13} /><line x1={cx} y1={cy + 13} x2={cx} y2={bot} />
        <rect x={cx - 5.5} y={cy - 13} width={11} height={26} className="sym-body" />
        <line x1={wiper[0]} y1={wiper[1]} x2={cx + 9} y2={cy} />
        <polygon points={`${cx + 6},${cy} ${cx + 13},${cy - 4} ${cx + 13},${cy + 4}`} className="sym-fill" />
      </g>
    );
  }
  const polarized = part.kind === 'capacitor' && part.polarized === true;
  const closed = part.kind === 'switch' && part.closed;
  return <TwoTerminal kind={placed.kind} a={placed.a} b={placed.b} polarized={polarized} closed={closed} />;
}

function FlagMark({ f }: { f: Flag }): ReactElement {
  const [x, y] = f.at;
  const s = f.dir === 'up' ? -1 : 1;
  if (f.kind === 'ground') {
    return <g><line x1={x} y1={y} x2={x} y2={y + 6 * s} /><line x1={x - 9} y1={y + 6 * s} x2={x + 9} y2={y + 6 * s} className="sym-plate" /><line x1={x - 5.5} y1={y + 10 * s} x2={x + 5.5} y2={y + 10 * s} /><line x1={x - 2} y1={y + 14 * s} x2={x + 2} y2={y + 14 * s} /></g>;
  }
  if (f.kind === 'rail') {
    return <g><line x1={x} y1={y} x2={x} y2={y + 7 * s} /><line x1={x - 9} y1={y + 7 * s} x2={x + 9} y2={y + 7 * s} className="sym-plate" /><text x={x} y={y + (s < 0 ? -12 : 20)} textAnchor="middle" className="rail-text">{f.text}</text></g>;
  }
  if (f.kind === 'terminal') {
    const dx = f.dir === 'left' ? -1 : 1;
    return <g><circle cx={x} cy={y} r={3.5} className="sym-open" /><text x={x + dx * 8} y={y + 4} textAnchor={dx < 0 ? 'end' : 'start'} className="term-text">{f.text}</text></g>;
  }
  const anchor = f.dir === 'left' ? 'end' : f.dir === 'right' ? 'start' : 'middle';
  const tx = x + (f.dir === 'left' ? -5 : f.dir === 'right' ? 5 : 0);
  const ty = y + (f.dir === 'up' ? -6 : f.dir === 'down' ? 14 : 4);
  return <text x={tx} y={ty} textAnchor={anchor} className="net-text">→{f.text}</text>;
}

function labelPosition(p: PlacedPart): { x: number; y: number; anchor: 'start' | 'middle' | 'end' } {
  if (p.kind === 'tube') return { x: p.centre[0] - p.radius - 4, y: p.centre[1] - p.radius - 6, anchor: 'start' };
  const horiz = p.a[1] === p.b[1];
  if (horiz) return { x: (p.a[0] + p.b[0]) / 2, y: p.a[1] - 26, anchor: 'middle' };
  if (p.kind === 'pot3') return { x: p.wiper[0] + 2, y: p.wiper[1] + 16, anchor: 'start' };
  return { x: p.a[0] + 10, y: (p.a[1] + p.b[1]) / 2 - 2, anchor: 'start' };
}

export interface SchematicProps {
  readonly design: Design;
  readonly selectedId: string | null;
  readonly changedIds: ReadonlySet<string>;
  readonly onSelect: (id: string) => void;
}

export function Schematic({ design, selectedId, changedIds, onSelect }: SchematicProps): ReactElement {
  const layout = useMemo(() => layoutDesign(design), [design]);
  const byId = new Map(design.parts.map((p) => [p.id, p]));
  const key = (id: string) => (e: KeyboardEvent) => { if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); onSelect(id); } };
  return (
    <svg className="schematic" viewBox={`0 0 ${layout.width} ${layout.height}`} role="group" aria-label={`Schematic of ${design.name}`} preserveAspectRatio="xMidYMid meet">
      <g className="wires">
        {layout.wires.map((w, i) => <polyline key={i} points={pts(w)} fill="none" />)}
        {layout.dots.map((d, i) => <circle key={i} cx={d[0]} cy={d[1]} r={2.6} className="sym-fill" />)}
        {layout.flags.map((f, i) => <FlagMark key={i} f={f} />)}
        {layout.nodeLabels.map((l, i) => <text key={i} x={l.at[0]} y={l.at[1]} className="node-text">{l.text}</text>)}
      </g>
      {layout.parts.map((pl) => {
        const part = byId.get(pl.id);
        if (!part) return null;
        const lp = labelPosition(pl);
        const cls = `part${pl.id === selectedId ? ' selected' : ''}${changedIds.has(pl.id) ? ' changed' : ''}`;
        return (
          <g key={pl.id} className={cls} role="button" tabIndex={0} aria-pressed={pl.id === selectedId} aria-label={`${pl.id}, ${part.label ?? part.kind}, ${partValueText(part)}`} data-part={pl.id} onClick={() => onSelect(pl.id)} onKeyDown={key(pl.id)}>
            <HitArea placed={pl} />
            <Symbol placed={pl} part={part} />
            <text x={lp.x} y={lp.y} textAnchor={lp.anchor} className="part-id">{pl.id}</text>
            <text x={lp.x} y={lp.y + 12} textAnchor={lp.anchor} className="part-value">{partValueText(part)}</text>
          </g>
        );
      })}
    </svg>
  );
}

function HitArea({ placed }: { placed: PlacedPart }): ReactElement {
  if (placed.kind === 'tube') return <circle cx={placed.centre[0]} cy={placed.centre[1]} r={placed.radius + 6} className="hit" />;
  const xs = [placed.a[0], placed.b[0], ...(placed.kind === 'pot3' ? [placed.wiper[0]] : [])];
  const ys = [placed.a[1], placed.b[1]];
  const x0 = Math.min(...xs) - 12, x1 = Math.max(...xs) + 12, y0 = Math.min(...ys) - 12, y1 = Math.max(...ys) + 12;
  return <rect x={x0} y={y0} width={x1 - x0} height={y1 - y0} rx={6} className="hit" />;
}
