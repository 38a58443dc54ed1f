// Hearing the design: source, transport with waveform and loop, input staging and meters.
import { useEffect, useRef, useState, type ReactElement } from 'react';
import type { AudioPort, LoopRegion, SourceClip } from './audio-port.ts';
import type { Design } from '../dsp/circuit/design.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import type { PackReply, PackRequest } from './pack-protocol.ts';
import { dbfsFraction, formatDbfs, formatVolts, inputAtFullScale, voltsFraction } from './model/meters.ts';

export interface DemoClip {
  readonly name: string;
  readonly title: string;
  readonly file: string;
  readonly description: string;
  readonly voltsAtFullScale: number;
  readonly durationSeconds: number;
}

export function Waveform({
  samples,
  duration,
  loop,
  onLoop,
  position,
}: {
  samples: Float32Array | null;
  duration: number;
  loop: LoopRegion | null;
  onLoop: (r: LoopRegion | null) => void;
  position: () => number;
}): ReactElement {
  const ref = useRef<HTMLCanvasElement | null>(null);
  const peaks = useRef<Float32Array | null>(null);
  const drag = useRef<number | null>(null);
  const [sel, setSel] = useState<LoopRegion | null>(loop);
  useEffect(() => setSel(loop), [loop]);
  useEffect(() => {
    peaks.current = null;
  }, [samples]);
  useEffect(() => {
    let raf = 0;
    const draw = () => {
      const c = ref.current;
      if (c && samples) {
        const w = c.clientWidth,
          h = c.clientHeight,
          dpr = window.devicePixelRatio || 1;
        if (c.width !== Math.round(w * dpr)) {
          c.width = Math.round(w * dpr);
          c.height = Math.round(h * dpr);
          peaks.current = null;
        }
        if (!peaks.current || peaks.current.length !== Math.floor(w)) {
          const n = Math.max(1, Math.floor(w)),
            p = new Float32Array(n),
            per = samples.length / n;
          for (let i = 0; i < n; i++) {
            let m = 0;
            for (let k = Math.floor(i * per); k < Math.floor((i + 1) * per); k++) m = Math.max(m, Math.abs(samples[k]!));
            p[i] = m;
          }
          peaks.current = p;
        }
        const g = c.getContext('2d')!;
        g.setTransform(dpr, 0, 0, dpr, 0, 0);
        g.clearRect(0, 0, w, h);
        const st = getComputedStyle(document.documentElement);
        const region = drag.current !== null ? sel : loop;
        if (region && duration > 0) {
          g.fillStyle = st.getPropertyValue('--loop').trim();
          g.fillRect((region.startSeconds / duration) * w, 0, ((region.endSeconds - region.startSeconds) / duration) * w, h);
        }
        g.fillStyle = st.getPropertyValue('--ink-soft').trim();
        const p = peaks.current;
        let max = 1e-6;
        for (let i = 0; i < p.length; i++) max = Math.max(max, p[i]!);
        for (let i = 0; i < p.length; i++) {
          const a = (p[i]! / max) * (h / 2 - 2);
          g.fillRect(i, h / 2 - a, 1, Math.max(1, 2 * a));
        }
        const x = duration > 0 ? (position() / duration) * w : 0;
        g.fillStyle = st.getPropertyValue('--accent').trim();
        g.fillRect(x, 0, 2, h);
      }
      raf = requestAnimationFrame(draw);
    };
    raf = requestAnimationFrame(draw);
    return () => cancelAnimationFrame(raf);
  }, [samples, duration, loop, sel, position]);
  const at = (e: React.PointerEvent) => {
    const r = (e.currentTarget as HTMLElement).getBoundingClientRect();
    return Math.min(duration, Math.max(0, ((e.clientX - r.left) / r.width) * duration));
  };
  return (
    <canvas
      ref={ref}
      className="waveform"
      aria-label="Waveform overview: drag to choose a loop region"
      role="img"
      onPointerDown={(e) => {
        drag.current = at(e);
        (e.currentTarget as HTMLElement).setPointerCapture(e.pointerId);
        setSel(null);
      }}
      onPointerMove={(e) => {
        if (drag.current !== null) {
          const t = at(e);
          setSel({ startSeconds: Math.min(drag.current, t), endSeconds: Math.max(drag.current, t) });
        }
      }}
      onPointerUp={(e) => {
        if (drag.current === null) return;
        const t = at(e);
        const a = Math.min(drag.current, t),
          b = Math.max(drag.current, t);
        drag.current = null;
        onLoop(b - a > 0.05 ? { startSeconds: a, endSeconds: b } : null);
      }}
    />
  );
}

/** How long the full-scale mark stays lit after the last peak at full scale, ms. */
const CLIP_HOLD_MS = 2000;

export function Meters({ port, voltsAtFullScale }: { port: AudioPort; voltsAtFullScale: number }): ReactElement {
  const inBar = useRef<HTMLSpanElement | null>(null),
    outBar = useRef<HTMLSpanElement | null>(null);
  const inText = useRef<HTMLSpanElement | null>(null),
    outText = useRef<HTMLSpanElement | null>(null);
  const clipMark = useRef<HTMLSpanElement | null>(null);
  useEffect(() => {
    let raf = 0,
      last = 0,
      inHold = 0,
      outHold = -120,
      clipAt = -Infinity;
    const tick = (t: number) => {
      const { inputVolts, outputDbfs } = port.levels();
      const dt = Math.min(0.1, (t - last) / 1000);
      last = t;
      if (inputAtFullScale(inputVolts, voltsAtFullScale)) clipAt = t;
      if (clipMark.current) clipMark.current.hidden = t - clipAt > CLIP_HOLD_MS;
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
  }, [port, voltsAtFullScale]);
  return (
    <div className="meters">
      <div className="meter">
        <span className="meter-label">Circuit input</span>
        <span className="meter-track">
          <span ref={inBar} className="meter-fill" />
        </span>
        <span ref={inText} className="meter-num" aria-live="off" data-testid="input-level">
          —
        </span>
        <span className="meter-scale">
          1 mV … 3 V{' '}
          <span
            ref={clipMark}
            className="clip-mark"
            data-testid="input-clip"
            hidden
            title="The source reached full scale: the interface (or the file) clips, and the circuit hears a flattened wave. Lower the interface gain, then set the calibration to match."
          >
            input at full scale
          </span>
        </span>
      </div>
      <div className="meter">
        <span className="meter-label">Output</span>
        <span className="meter-track">
          <span ref={outBar} className="meter-fill out" />
        </span>
        <span ref={outText} className="meter-num" aria-live="off">
          —
        </span>
        <span className="meter-scale">−60 … 0 dBFS</span>
      </div>
    </div>
  );
}

/** Renders the loop region (or the whole clip) for A, B and dry in a worker and downloads the pack. */
/**
 * Oversampling offered for client clips (offline, in a worker). Aliases measured with
 * npx tsx bench/alias.bench.ts (pentode-triode, 1 V peak sines near 1 / 2.5 kHz).
 */
const PACK_QUALITIES: readonly { factor: OversamplingFactor; label: string }[] = [
  { factor: 8, label: '8× (quick; aliases about −72 / −77 dB)' },
  { factor: 32, label: '32× (aliases about −97 / −83 dB)' },
  { factor: 128, label: '128× (best; about 1/6 real time)' },
];

export function ClientPack({
  clip,
  loop,
  designA,
  designB,
  voltsAtFullScale,
}: {
  clip: SourceClip | null;
  loop: LoopRegion | null;
  designA: Design;
  designB: Design;
  voltsAtFullScale: number;
}): ReactElement {
  const [factor, setFactor] = useState<OversamplingFactor>(32);
  const [state, setState] = useState<
    { kind: 'idle' } | { kind: 'busy'; fraction: number; stage: string } | { kind: 'done'; text: string } | { kind: 'failed'; text: string }
  >({ kind: 'idle' });
  const worker = useRef<Worker | null>(null);
  const nextId = useRef(0);
  useEffect(() => () => worker.current?.terminate(), []);
  const start = () => {
    if (!clip) {
      setState({ kind: 'failed', text: 'No clip loaded: choose a demo clip or open an audio file first.' });
      return;
    }
    const fs = clip.sampleRateHz;
    const from = loop ? Math.max(0, Math.floor(loop.startSeconds * fs)) : 0;
    const to = loop ? Math.min(clip.samples.length, Math.ceil(loop.endSeconds * fs)) : clip.samples.length;
    if (to - from < 1) {
      setState({ kind: 'failed', text: 'The loop region is empty: drag a longer region or clear the loop.' });
      return;
    }
    const input = clip.samples.slice(from, to);
    const regionLabel = loop ? `loop ${(from / fs).toFixed(3)}–${(to / fs).toFixed(3)} s` : 'whole clip';
    worker.current?.terminate();
    const w = new Worker(new URL('./pack.worker.ts', import.meta.url), { type: 'module' });
    worker.current = w;
    const id = ++nextId.current;
    const finish = () => {
      w.terminate();
      if (worker.current === w) worker.current = null;
    };
    w.onmessage = (ev: MessageEvent<PackReply>) => {
      const m = ev.data;
      if (m.id !== id) return;
      if (m.type === 'progress') setState({ kind: 'busy', fraction: m.fraction, stage: m.stage });
      else if (m.type === 'failed') {
        finish();
        setState({ kind: 'failed', text: `Could not render the pack: ${m.reason}` });
      } else {
        finish();
        const a = document.createElement('a');
        a.href = URL.createObjectURL(new Blob([m.zip as Uint8Array<ArrayBuffer>], { type: 'application/zip' }));
        a.download = m.fileName;
        a.click();
        setTimeout(() => URL.revokeObjectURL(a.href), 1000);
        setState({
          kind: 'done',
          text: `Downloaded ${m.fileName} (${(m.zip.length / 1048576).toFixed(1)} MB): A/B and dry/B pairs, loudness-matched, with sheets.`,
        });
      }
    };
    w.onerror = (ev) => {
      finish();
      setState({ kind: 'failed', text: `Could not render the pack: ${ev.message || 'the render worker failed to start'}` });
    };
    setState({ kind: 'busy', fraction: 0, stage: 'starting' });
    const req: PackRequest = {
      type: 'pack',
      id,
      designA,
      designB,
      input,
      sampleRateHz: fs,
      inputVoltsAtFullScale: voltsAtFullScale,
      factor,
      clipName: clip.name,
      regionLabel,
    };
    w.postMessage(req, [input.buffer]);
  };
  const cancel = () => {
    worker.current?.terminate();
    worker.current = null;
    setState({ kind: 'idle' });
  };
  const busy = state.kind === 'busy';
  return (
    <div className="row pack" role="group" aria-label="Client pack">
      <button type="button" onClick={start} disabled={busy} data-testid="render-pack" aria-describedby="pack-status">
        Render client pack
      </button>
      <label className="inline-label">
        at
        <select value={factor} disabled={busy} onChange={(e) => setFactor(Number(e.target.value) as OversamplingFactor)}>
          {PACK_QUALITIES.map((q) => (
            <option key={q.factor} value={q.factor}>
              {q.label}
            </option>
          ))}
        </select>
      </label>
      {busy && (
        <button type="button" onClick={cancel}>
          Cancel
        </button>
      )}
      {busy && <progress max={1} value={state.fraction} aria-label="Client pack progress" data-testid="pack-progress" />}
      <span
        id="pack-status"
        className={`fine${state.kind === 'failed' ? ' warn' : ''}`}
        role={state.kind === 'failed' ? 'alert' : 'status'}
        data-testid="pack-status"
      >
        {busy
          ? `${state.stage}… ${Math.round(state.fraction * 100)} %`
          : state.kind === 'idle'
            ? `${loop ? 'loop region' : 'whole clip'} through A, B and dry, matched loudness, as one .zip`
            : state.text}
      </span>
    </div>
  );
}
