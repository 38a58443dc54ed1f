// Hearing the design: source, transport with waveform and loop, input staging and meters.
import { useEffect, useRef, useState, type ReactElement } from 'react';
import type { AudioPort, LoopRegion } from './audio-port.ts';
import { dbfsFraction, formatDbfs, formatVolts, voltsFraction } from './model/meters.ts';

export interface DemoClip { readonly name: string; readonly title: string; readonly file: string; readonly description: string; readonly voltsAtFullScale: number; readonly durationSeconds: number }

export function Waveform({ samples, duration, loop, onLoop, position }: { samples: Float32Array | null; duration: number; loop: LoopRegion | null; onLoop: (r: LoopRegion | null) => void; position: () => number }): ReactElement {
  const ref = useRef<HTMLCanvasElement | null>(null);
  const peaks = useRef<Float32Array | null>(null);
  const drag = useRef<number | null>(null);
  const [sel, setSel] = useState<LoopRegion | null>(loop);
  useEffect(() => setSel(loop), [loop]);
  useEffect(() => { peaks.current = null; }, [samples]);
  useEffect(() => {
    let raf = 0;
    const draw = () => {
      const c = ref.current;
      if (c && samples) {
        const w = c.clientWidth, h = c.clientHeight, dpr = window.devicePixelRatio || 1;
        if (c.width !== Math.round(w * dpr)) { c.width = Math.round(w * dpr); c.height = Math.round(h * dpr); peaks.current = null; }
        if (!peaks.current || peaks.current.length !== Math.floor(w)) {
          const n = Math.max(1, Math.floor(w)), p = new Float32Array(n), per = samples.length / n;
          for (let i = 0; i < n; i++) { let m = 0; for (let k = Math.floor(i * per); k < Math.floor((i + 1) * per); k++) m = Math.max(m, Math.abs(samples[k]!)); p[i] = m; }
          peaks.current = p;
        }
        const g = c.getContext('2d')!;
        g.setTransform(dpr, 0, 0, dpr, 0, 0);
        g.clearRect(0, 0, w, h);
        const st = getComputedStyle(document.documentElement);
        const region = drag.current !== null ? sel : loop;
        if (region && duration > 0) { g.fillStyle = st.getPropertyValue('--loop').trim(); g.fillRect((region.startSeconds / duration) * w, 0, ((region.endSeconds - region.startSeconds) / duration) * w, h); }
        g.fillStyle = st.getPropertyValue('--ink-soft').trim();
        const p = peaks.current;
        let max = 1e-6; for (let i = 0; i < p.length; i++) max = Math.max(max, p[i]!);
        for (let i = 0; i < p.length; i++) { const a = (p[i]! / max) * (h / 2 - 2); g.fillRect(i, h / 2 - a, 1, Math.max(1, 2 * a)); }
        const x = duration > 0 ? (position() / duration) * w : 0;
        g.fillStyle = st.getPropertyValue('--accent').trim(); g.fillRect(x, 0, 2, h);
      }
      raf = requestAnimationFrame(draw);
    };
    raf = requestAnimationFrame(draw);
    return () => cancelAnimationFrame(raf);
  }, [samples, duration, loop, sel, position]);
  const at = (e: React.PointerEvent) => { const r = (e.currentTarget as HTMLElement).getBoundingClientRect(); return Math.min(duration, Math.max(0, ((e.clientX - r.left) / r.width) * duration)); };
  return (
    <canvas ref={ref} className="waveform" aria-label="Waveform overview: drag to choose a loop region" role="img"
      onPointerDown={(e) => { drag.current = at(e); (e.currentTarget as HTMLElement).setPointerCapture(e.pointerId); setSel(null); }}
      onPointerMove={(e) => { if (drag.current !== null) { const t = at(e); setSel({ startSeconds: Math.min(drag.current, t), endSeconds: Math.max(drag.current, t) }); } }}
      onPointerUp={(e) => { if (drag.current === null) return; const t = at(e); const a = Math.min(drag.current, t), b = Math.max(drag.current, t); drag.current = null; onLoop(b - a > 0.05 ? { startSeconds: a, endSeconds: b } : null); }} />
  );
}

export function Meters({ port }: { port: AudioPort }): ReactElement {
  const inBar = useRef<HTMLSpanElement | null>(null), outBar = useRef<HTMLSpanElement | null>(null);
  const inText = useRef<HTMLSpanElement | null>(null), outText = useRef<HTMLSpanElement | null>(null);
  useEffect(() => {
    let raf = 0, last = 0, inHold = 0, outHold = -120;
    const tick = (t: number) => {
      const { inputVolts, outputDbfs } = port.levels();
      const dt = Math.min(0.1, (t - last) / 1000); last = t;
      inHold = Math.max(inputVolts, inHold * Math.pow(0.1, dt)); // falls 20 dB per second
      outHold = Math.max(outputDbfs, outHold - 20 * dt);
      if (inBar.current) inBar.current.style.transform = `scaleX(${voltsFraction(inHold)})`;
      if (outBar.current) outBar.current.style.transform = `scaleX(${dbfsFraction(outHold)})`;
      if (inText.current) inText.current.textContent = `${formatVolts(inHold)} peak`;
      if (outText.current) outText.current.textContent = formatDbfs(outHold);
      raf = requestAnimationFrame(tick);
    };
    raf = requestAnimationFrame(tick);
    return () => cancelAnimationFrame(raf);
  }, [port]);
  return (
    <div className="meters">
      <div className="meter"><span className="meter-label">Circuit input</span><span className="meter-track"><span ref={inBar} className="meter-fill" /></span><span ref={inText} className="meter-num" aria-live="off">—</span><span className="meter-scale">1 mV … 3 V</span></div>
      <div className="meter"><span className="meter-label">Output</span><span className="meter-track"><span ref={outBar} className="meter-fill out" /></span><span ref={outText} className="meter-num" aria-live="off">—</span><span className="meter-scale">−60 … 0 dBFS</span></div>
    </div>
  );
}
