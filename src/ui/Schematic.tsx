// The current design as a schematic (IEC 60617-style symbols: rectangular resistor, two-plate
// capacitor, potentiometer as a rectangle with a wiper arrow, tube as an envelope circle with
// plate bar, dashed grids and cathode). Each part is a button; drag it (or Alt+arrow keys) to
// nudge it, and the position is saved with the design. Laid out by model/sheet-layout.ts; drawn
// at a scale that keeps its 12 px text at 11 px or more (the sheet scrolls when it is larger).
import { useEffect, useRef, useState, type KeyboardEvent, type PointerEvent, type ReactElement } from 'react';
import type { Design } from '../dsp/circuit/design.ts';
import { workerElk } from './elk-in-worker.ts';
import { layoutSheet, valueText, type PlacedSymbol, type Point, type SheetFlag, type SheetLayout } from './model/sheet-layout.ts';

export { valueText as partValueText };

/** Smallest drawing scale: 12 px sheet text stays at 11 px or more. */
export const MIN_SCALE = 0.92;
const MAX_SCALE = 1.4;
const NUDGE_STEP = 10;

const pts = (ps: readonly Point[]) => ps.map((p) => `${p[0]},${p[1]}`).join(' ');

function TwoTerminal({ kind, a, b, polarized, closed }: { kind: string; a: Point; b: Point; polarized: boolean; closed: boolean }): ReactElement {
  const horiz = a[1] === b[1];
  const cx = (a[0] + b[0]) / 2,
    cy = (a[1] + b[1]) / 2;
  const h = Math.hypot(b[0] - a[0], b[1] - a[1]) / 2;
  let body: ReactElement;
  if (kind === 'resistor' || kind === 'pot2') {
    body = (
      <>
        <line x1={-h} y1={0} x2={-13} y2={0} />
        <line x1={13} y1={0} x2={h} y2={0} />
        <rect x={-13} y={-5.5} width={26} height={11} className="sym-body" />
        {kind === 'pot2' && (
          <>
            <line x1={-12} y1={10} x2={12} y2={-10} />
            <polygon points="12,-10 5,-8 10,-3" className="sym-fill" />
          </>
        )}
      </>
    );
  } else if (kind === 'capacitor') {
    body = (
      <>
        <line x1={-h} y1={0} x2={-3.5} y2={0} />
        <line x1={3.5} y1={0} x2={h} y2={0} />
        <line x1={-3.5} y1={-11} x2={-3.5} y2={11} className="sym-plate" />
        {polarized ? (
          <path d="M 6.5 -11 Q 2.5 0 6.5 11" className="sym-plate" fill="none" />
        ) : (
          <line x1={3.5} y1={-11} x2={3.5} y2={11} className="sym-plate" />
        )}
      </>
    );
  } else {
    body = (
      <>
        <line x1={-h} y1={0} x2={-10} y2={0} />
        <line x1={10} y1={0} x2={h} y2={0} />
        <circle cx={-10} cy={0} r={2} className="sym-fill" />
        <circle cx={10} cy={0} r={2} className="sym-fill" />
        {closed ? <line x1={-10} y1={0} x2={10} y2={-2} /> : <line x1={-10} y1={0} x2={9} y2={-10} />}
      </>
    );
  }
  const rot = horiz ? (a[0] > b[0] ? 180 : 0) : a[1] > b[1] ? 270 : 90;
  // (the + of a polarised capacitor is one of the layout's texts, placed clear of leads and labels)
  return <g transform={`translate(${cx},${cy}) rotate(${rot})`}>{body}</g>;
}

function TubeSymbol({ p }: { p: PlacedSymbol }): ReactElement {
  const [x, y] = p.centre!;
  const r = 30,
    pentode = p.symbol === 'pentode';
  const gy = pentode ? y - 2 : y;
  return (
    <g>
      <circle cx={x} cy={y} r={r} className="sym-body" />
      <line x1={x - 12} y1={y - 15} x2={x + 12} y2={y - 15} className="sym-plate" />
      <line x1={x} y1={y - r} x2={x} y2={y - 15} />
      <line x1={x - 14} y1={gy} x2={x + 14} y2={gy} strokeDasharray="3 3" />
      <line x1={x - r} y1={y} x2={x - 14} y2={gy} />
      {pentode && (
        <>
          <line x1={x - 14} y1={y - 8} x2={x + 14} y2={y - 8} strokeDasharray="3 3" />
          <polyline
            points={pts([
              [x + 14, y - 8],
              [x + 19, y - 8],
              [x + 19, y + 16],
              [x + r * 0.72, y + 16],
            ])}
            fill="none"
          />
          <line x1={x - 14} y1={y + 4} x2={x + 14} y2={y + 4} strokeDasharray="2 3" />
          <polyline
            points={pts([
              [x - 14, y + 4],
              [x - 18, y + 4],
              [x - 18, y + 16],
              [x - 10, y + 16],
            ])}
            fill="none"
          />
        </>
      )}
      <polyline
        points={pts([
          [x - 10, y + 19],
          [x - 10, y + 14],
          [x + 10, y + 14],
          [x + 10, y + 19],
        ])}
        fill="none"
        className="sym-plate"
      />
      <line x1={x} y1={y + 14} x2={x} y2={y + r} />
    </g>
  );
}

function Pot3({ p }: { p: PlacedSymbol }): ReactElement {
  const { a, b } = p;
  const cx = a[0],
    cy = (a[1] + b[1]) / 2;
  const top = Math.min(a[1], b[1]),
    bot = Math.max(a[1], b[1]);
  return (
    <g>
      <line x1={cx} y1={top} x2={cx} y2={cy - 13} />
      <line x1={cx} y1={cy + 13} x2={cx} y2={bot} />
      <rect x={cx - 5.5} y={cy - 13} width={11} height={26} className="sym-body" />
      <polygon points={`${cx + 6},${cy} ${cx + 13},${cy - 4} ${cx + 13},${cy + 4}`} className="sym-fill" />
    </g>
  );
}

function FlagMark({ f }: { f: SheetFlag }): ReactElement {
  const [x, y] = f.at;
  if (f.kind === 'ground') {
    // a stub away from the part, then the ground bars below its end
    const [ex, ey] = f.side === 'W' ? [x - 8, y] : f.side === 'E' ? [x + 8, y] : f.side === 'N' ? [x, y - 6] : [x, y + 6];
    const s = f.side === 'N' ? -1 : 1;
    return (
      <g className="flag">
        <line x1={x} y1={y} x2={ex} y2={ey} />
        <line x1={ex - 9} y1={ey} x2={ex + 9} y2={ey} className="sym-plate" />
        <line x1={ex - 5.5} y1={ey + 4 * s} x2={ex + 5.5} y2={ey + 4 * s} />
        <line x1={ex - 2} y1={ey + 8 * s} x2={ex + 2} y2={ey + 8 * s} />
      </g>
    );
  }
  if (f.side === 'N' || f.side === 'S') {
    const s = f.side === 'N' ? -1 : 1;
    return (
      <g className="flag">
        <line x1={x} y1={y} x2={x} y2={y + 7 * s} />
        <line x1={x - 9} y1={y + 7 * s} x2={x + 9} y2={y + 7 * s} className="sym-plate" />
        <text x={x} y={y + (s < 0 ? -11 : 21)} textAnchor="middle" className="rail-text">
          {f.text}
        </text>
      </g>
    );
  }
  const s = f.side === 'W' ? -1 : 1;
  return (
    <g className="flag">
      <line x1={x} y1={y} x2={x + 6 * s} y2={y} />
      <line x1={x + 6 * s} y1={y - 7} x2={x + 6 * s} y2={y + 7} className="sym-plate" />
      <text x={x + 10 * s} y={y + 4} textAnchor={s < 0 ? 'end' : 'start'} className="rail-text">
        {f.text}
      </text>
    </g>
  );
}

export interface SchematicProps {
  readonly design: Design;
  readonly selectedId: string | null;
  readonly changedIds: ReadonlySet<string>;
  readonly faultyIds?: ReadonlySet<string>;
  readonly onSelect: (id: string) => void;
  /** Move a part on the sheet by (dx, dy) sheet units. */
  readonly onNudge?: (id: string, dx: number, dy: number) => void;
}

export function Schematic({ design, selectedId, changedIds, faultyIds, onSelect, onNudge }: SchematicProps): ReactElement {
  const [layout, setLayout] = useState<{ for: Design; sheet: SheetLayout } | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const box = useRef<HTMLDivElement | null>(null);
  const [boxWidth, setBoxWidth] = useState(800);
  useEffect(() => {
    let live = true;
    workerElk()
      .then((elk) => layoutSheet(design, elk))
      .then(
        (sheet) => {
          if (live) {
            setLayout({ for: design, sheet });
            setFailure(null);
          }
        },
        (err: unknown) => {
          if (live) setFailure(String(err));
        },
      );
    return () => {
      live = false;
    };
  }, [design]);
  useEffect(() => {
    const el = box.current;
    if (!el) return;
    const ro = new ResizeObserver(() => setBoxWidth(el.clientWidth));
    ro.observe(el);
    setBoxWidth(el.clientWidth);
    return () => ro.disconnect();
  }, []);
  const drag = useRef<{ id: string; x: number; y: number; moved: boolean } | null>(null);
  const [dragOffset, setDragOffset] = useState<{ id: string; dx: number; dy: number } | null>(null);
  const sheet = layout?.sheet ?? null;
  const scale = sheet ? Math.min(MAX_SCALE, Math.max(MIN_SCALE, (boxWidth - 4) / sheet.width)) : 1;
  const byId = new Map(design.parts.map((p) => [p.id, p]));
  const key = (id: string) => (e: KeyboardEvent) => {
    if (e.key === 'Enter' || e.key === ' ') {
      e.preventDefault();
      onSelect(id);
      return;
    }
    if (e.altKey && onNudge && e.key.startsWith('Arrow')) {
      e.preventDefault();
      const d = { ArrowLeft: [-1, 0], ArrowRight: [1, 0], ArrowUp: [0, -1], ArrowDown: [0, 1] }[e.key];
      if (d) onNudge(id, d[0]! * NUDGE_STEP, d[1]! * NUDGE_STEP);
    }
  };
  const down = (id: string) => (e: PointerEvent) => {
    drag.current = { id, x: e.clientX, y: e.clientY, moved: false };
    (e.currentTarget as Element).setPointerCapture(e.pointerId);
  };
  const move = (e: PointerEvent) => {
    const g = drag.current;
    if (!g) return;
    const dx = (e.clientX - g.x) / scale,
      dy = (e.clientY - g.y) / scale;
    if (!g.moved && Math.hypot(dx, dy) < 4) return;
    g.moved = true;
    setDragOffset({ id: g.id, dx, dy });
  };
  const up = (e: PointerEvent) => {
    const g = drag.current;
    drag.current = null;
    setDragOffset(null);
    if (!g) return;
    if (!g.moved) {
      onSelect(g.id);
      return;
    }
    const snap = (v: number) => Math.round(v / NUDGE_STEP) * NUDGE_STEP;
    const dx = snap((e.clientX - g.x) / scale),
      dy = snap((e.clientY - g.y) / scale);
    if ((dx !== 0 || dy !== 0) && onNudge) onNudge(g.id, dx, dy);
  };
  return (
    <div className="sheet-box" ref={box}>
      {failure && (
        <p className="warn" role="alert">
          The schematic could not be laid out: {failure}
        </p>
      )}
      {sheet && (
        <svg
          className="schematic"
          width={sheet.width * scale}
          height={sheet.height * scale}
          viewBox={`0 0 ${sheet.width} ${sheet.height}`}
          role="group"
          aria-label={`Schematic of ${design.name}`}
          data-scale={scale}
          onPointerMove={move}
          onPointerUp={up}
        >
          <g className="wires">
            {sheet.wires.map((w, i) => (
              <polyline key={i} points={pts(w.points)} fill="none" data-net={w.net}>
                <title>node {w.net}</title>
              </polyline>
            ))}
            {sheet.dots.map((d, i) => (
              <circle key={i} cx={d[0]} cy={d[1]} r={3} className="sym-fill dot" />
            ))}
          </g>
          {sheet.ports.map((p) => (
            <g key={p.kind} className="io">
              <circle cx={p.at[0]} cy={p.at[1]} r={4} className="sym-open" />
              <text x={p.text.x} y={p.text.y} className="term-text" data-w={p.text.width}>
                {p.text.text}
              </text>
            </g>
          ))}
          {sheet.parts.map((pl) => {
            const part = byId.get(pl.id);
            if (!part) return null;
            const off = dragOffset?.id === pl.id ? dragOffset : null;
            const cls = `part${pl.id === selectedId ? ' selected' : ''}${changedIds.has(pl.id) ? ' changed' : ''}${faultyIds?.has(pl.id) ? ' faulty' : ''}`;
            return (
              <g
                key={pl.id}
                className={cls}
                role="button"
                tabIndex={0}
                aria-pressed={pl.id === selectedId}
                aria-label={`${pl.id}, ${part.label ?? part.kind}, ${valueText(part)}`}
                data-part={pl.id}
                transform={off ? `translate(${off.dx},${off.dy})` : undefined}
                onPointerDown={down(pl.id)}
                onKeyDown={key(pl.id)}
              >
                <rect x={pl.x} y={pl.y} width={pl.width} height={pl.height} className="hit" rx={4} />
                {pl.leads.map((l, i) => (
                  <polyline key={i} points={pts(l)} fill="none" />
                ))}
                {pl.symbol === 'triode' || pl.symbol === 'pentode' ? (
                  <TubeSymbol p={pl} />
                ) : pl.symbol === 'pot3' ? (
                  <Pot3 p={pl} />
                ) : (
                  <TwoTerminal kind={pl.symbol} a={pl.a} b={pl.b} polarized={pl.polarized} closed={pl.closed} />
                )}
                {pl.flags.map((f, i) => (
                  <FlagMark key={i} f={f} />
                ))}
                {pl.terminals.map((t) => (
                  <circle key={t.name} cx={t.at[0]} cy={t.at[1]} r={0.01} className={`term${t.flagged ? ' flagged' : ''}`} data-node={t.node} />
                ))}
                {pl.texts.map((t) => (
                  <text key={t.cls} x={t.x} y={t.y} className={t.cls} data-w={t.width}>
                    {t.text}
                  </text>
                ))}
              </g>
            );
          })}
        </svg>
      )}
    </div>
  );
}
