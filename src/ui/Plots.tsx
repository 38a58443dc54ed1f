// Plots: frequency response (SVG), output spectrum and node-voltage scope (canvas, drawn per frame).
import { useEffect, useRef, type ReactElement } from 'react';
import { logFreqFraction } from './model/meters.ts';
import type { Curve } from './model/response.ts';
import type { ScopeTrace } from './audio-port.ts';

const DECADES = [20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000];
const fLabel = (f: number) => (f >= 1000 ? `${f / 1000}k` : `${f}`);

export interface ResponseSeries {
  readonly name: string;
  readonly curve: Curve | null;
  readonly cls: string;
}

export function ResponsePlot({ title, series, note }: { title: string; series: readonly ResponseSeries[]; note: string | null }): ReactElement {
  const W = 420,
    H = 170,
    l = 34,
    r = 8,
    t = 10,
    b = 22;
  const all = series.flatMap((s) => s.curve?.db ?? []).filter(Number.isFinite);
  const top = all.length ? Math.ceil((Math.max(...all) + 3) / 6) * 6 : 6;
  const bottom = Math.max(top - 60, all.length ? Math.floor((Math.min(...all) - 3) / 6) * 6 : -54);
  const x = (f: number) => l + logFreqFraction(f) * (W - l - r);
  const y = (db: number) => t + ((top - Math.max(bottom, Math.min(top, db))) / (top - bottom)) * (H - t - b);
  const ticks: number[] = [];
  for (let v = top; v >= bottom; v -= top - bottom > 36 ? 12 : 6) ticks.push(v);
  const ready = series.some((s) => s.curve);
  return (
    <figure className="plot">
      <figcaption>{title}</figcaption>
      <svg viewBox={`0 0 ${W} ${H}`} role="img" aria-label={`${title}: ${series.map((s) => s.name).join(' and ')}, 20 Hz to 20 kHz`}>
        {DECADES.map((f) => (
          <g key={f}>
            <line x1={x(f)} x2={x(f)} y1={t} y2={H - b} className="grid" />
            <text x={x(f)} y={H - 6} textAnchor="middle" className="axis">
              {fLabel(f)}
            </text>
          </g>
        ))}
        {ticks.map((v) => (
          <g key={v}>
            <line x1={l} x2={W - r} y1={y(v)} y2={y(v)} className="grid" />
            <text x={l - 4} y={y(v) + 3} textAnchor="end" className="axis">
              {v}
            </text>
          </g>
        ))}
        <text x={4} y={t + 4} className="axis">
          dB
        </text>
        {series.map(
          (s) =>
            s.curve && (
              <polyline
                key={s.name}
                className={`trace ${s.cls}`}
                fill="none"
                points={s.curve.hertz.map((f, i) => `${x(f).toFixed(1)},${y(s.curve!.db[i]!).toFixed(1)}`).join(' ')}
              />
            ),
        )}
        {!ready && (
          <text x={W / 2} y={H / 2} textAnchor="middle" className="axis">
            analysis loading
          </text>
        )}
      </svg>
      <div className="legend">
        {series.map((s) => (
          <span key={s.name} className={`key ${s.cls}`}>
            {s.name}
          </span>
        ))}
        {note && <span className="fine"> {note}</span>}
      </div>
    </figure>
  );
}

function useCanvasLoop(draw: (g: CanvasRenderingContext2D, w: number, h: number) => void): React.RefObject<HTMLCanvasElement | null> {
  const ref = useRef<HTMLCanvasElement | null>(null);
  const drawRef = useRef(draw);
  drawRef.current = draw;
  useEffect(() => {
    let raf = 0;
    const loop = () => {
      const c = ref.current;
      if (c) {
        const dpr = window.devicePixelRatio || 1;
        const w = c.clientWidth,
          h = c.clientHeight;
        if (c.width !== Math.round(w * dpr) || c.height !== Math.round(h * dpr)) {
          c.width = Math.round(w * dpr);
          c.height = Math.round(h * dpr);
        }
        const g = c.getContext('2d');
        if (g && w > 0) {
          g.setTransform(dpr, 0, 0, dpr, 0, 0);
          g.clearRect(0, 0, w, h);
          drawRef.current(g, w, h);
        }
      }
      raf = requestAnimationFrame(loop);
    };
    raf = requestAnimationFrame(loop);
    return () => cancelAnimationFrame(raf);
  }, []);
  return ref;
}

const css = (name: string) => getComputedStyle(document.documentElement).getPropertyValue(name).trim() || '#333';

export function SpectrumPlot({ read }: { read: (into: Float32Array) => { ok: boolean; binHertz: number } }): ReactElement {
  const buf = useRef(new Float32Array(2048));
  const ref = useCanvasLoop((g, w, h) => {
    const { ok, binHertz } = read(buf.current);
    g.strokeStyle = css('--grid');
    g.lineWidth = 1;
    g.fillStyle = css('--ink-soft');
    g.font = '10px ui-monospace, monospace';
    for (const f of DECADES) {
      const x = logFreqFraction(f) * w;
      g.beginPath();
      g.moveTo(x, 0);
      g.lineTo(x, h - 12);
      g.stroke();
      g.fillText(fLabel(f), Math.min(w - 20, x + 2), h - 2);
    }
    if (!ok) {
      g.fillText('output spectrum appears while audio plays', 8, h / 2);
      return;
    }
    g.strokeStyle = css('--accent');
    g.lineWidth = 1.4;
    g.beginPath();
    const d = buf.current;
    let started = false;
    for (let i = 1; i < d.length; i++) {
      const f = i * binHertz;
      if (f < 20 || f > 20000) continue;
      const db = Math.max(-120, Math.min(0, d[i]!));
      const x = logFreqFraction(f) * w,
        y = ((0 - db) / 120) * (h - 14);
      if (!started) {
        g.moveTo(x, y);
        started = true;
      } else g.lineTo(x, y);
    }
    g.stroke();
  });
  return (
    <figure className="plot">
      <figcaption>Output spectrum (0 to −120 dBFS)</figcaption>
      <canvas ref={ref} className="canvas" role="img" aria-label="Output spectrum, live" />
    </figure>
  );
}

/** Node voltages over the clip, each trace around its own resting value, with the playhead. */
export function ScopePlot({
  trace,
  position,
  duration,
  chosen,
}: {
  trace: () => ScopeTrace | null;
  position: () => number;
  duration: number;
  chosen: readonly string[];
}): ReactElement {
  const ref = useCanvasLoop((g, w, h) => {
    const s = trace();
    g.font = '10px ui-monospace, monospace';
    if (!s) {
      g.fillStyle = css('--ink-soft');
      g.fillText('choose a clip: the scope shows node voltages over it', 8, h / 2);
      return;
    }
    const colours = [css('--accent'), css('--slot-b'), css('--ink'), css('--warn')];
    const rows = s.names.map((n, i) => ({ n, d: s.traces[i]! })).filter((r) => chosen.includes(r.n));
    const rowH = h / Math.max(1, rows.length);
    rows.forEach((r, k) => {
      const d = r.d;
      let lo = Infinity,
        hi = -Infinity;
      // NaN marks reports from while the slot was empty: gaps, not values
      for (let i = 0; i < d.length; i++) {
        const x = d[i]!;
        if (x === x) {
          lo = Math.min(lo, x);
          hi = Math.max(hi, x);
        }
      }
      if (!(hi >= lo)) return;
      const span = Math.max(hi - lo, 0.05);
      const y0 = k * rowH;
      g.strokeStyle = colours[k % colours.length]!;
      g.lineWidth = 1;
      g.beginPath();
      // min-max columns, each joined to the last value of the column before (so a step or a fast
      // swing draws as a line, not as separated dashes)
      let prev = Number.NaN;
      for (let px = 0; px < w; px++) {
        const i0 = Math.floor((px / w) * d.length),
          i1 = Math.max(i0 + 1, Math.floor(((px + 1) / w) * d.length));
        let mn = Infinity,
          mx = -Infinity;
        for (let i = i0; i < Math.min(d.length, i1); i++) {
          const x = d[i]!;
          if (x === x) {
            mn = Math.min(mn, x);
            mx = Math.max(mx, x);
          }
        }
        if (!Number.isFinite(mn)) {
          prev = Number.NaN;
          continue;
        }
        if (Number.isFinite(prev)) {
          mn = Math.min(mn, prev);
          mx = Math.max(mx, prev);
        }
        prev = d[Math.min(d.length, i1) - 1]!;
        const ya = y0 + 4 + ((hi - mx) / span) * (rowH - 16),
          yb = y0 + 4 + ((hi - mn) / span) * (rowH - 16);
        g.moveTo(px + 0.5, ya);
        g.lineTo(px + 0.5, Math.max(yb, ya + 1));
      }
      g.stroke();
      g.fillStyle = css('--ink');
      g.fillText(`${r.n}: ${lo.toFixed(2)} … ${hi.toFixed(2)} V`, 6, y0 + rowH - 4);
    });
    if (s.rolling) {
      g.fillStyle = css('--ink-soft');
      g.fillText(`last ${(s.traces[0]!.length / s.rateHz).toFixed(1)} s`, w - 70, 12);
      return;
    }
    const x = duration > 0 ? (position() / duration) * w : 0;
    g.strokeStyle = css('--ink');
    g.globalAlpha = 0.5;
    g.beginPath();
    g.moveTo(x, 0);
    g.lineTo(x, h);
    g.stroke();
    g.globalAlpha = 1;
  });
  return <canvas ref={ref} className="canvas scope" role="img" aria-label={`Scope of node voltages: ${chosen.join(', ')}`} />;
}
