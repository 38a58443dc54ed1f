// Hearing the design: source, transport, input staging, A/B, cabinet and quality, client pack, live input.
import { useEffect, useState, type ReactElement } from 'react';
import type { OversamplingFactor } from '../../dsp/oversampling/oversampler.ts';
import { LIVE_FACTORS } from '../../dsp/realtime/dual-slot-engine.ts';
import { calibrationProblem, dbuToPeakVolts, parseDbu } from '../model/calibration.ts';
import { formatVolts } from '../model/meters.ts';
import { ClientPack, Meters, Waveform, type DemoClip } from '../Listen.tsx';
import { ValueField } from '../PartEditor.tsx';
import { useWorkspace } from '../store/context.ts';
import { useFileActions } from '../store/actions.ts';
import { LiveControls } from './LiveControls.tsx';

const IMPULSES = import.meta.glob('/impulses/*.wav', { query: '?url', import: 'default', eager: true }) as Record<string, string>;
/** Measured alias levels (npx tsx bench/alias.bench.ts, pentode-triode, 1 V peak sines near 1 / 2.5 kHz). */
const QUALITY_LABELS: Partial<Record<OversamplingFactor, string>> = {
  1: 'draft (1×)',
  2: '2× (aliases about −55 / −48 dB)',
  4: '4× (default; aliases about −73 / −64 dB)',
  8: '8× (aliases about −72 / −77 dB; heavy)',
};

export function ListenPanel(): ReactElement {
  const { state, dispatch, port, status } = useWorkspace();
  const { chooseDemo, openAudioFile } = useFileActions();
  const [clips, setClips] = useState<DemoClip[]>([]);
  useEffect(() => {
    fetch('/demo/clips.json')
      .then((r) => r.json() as Promise<{ clips: DemoClip[] }>)
      .then((j) => setClips(j.clips))
      .catch(() => dispatch({ type: 'say', text: 'demo clips could not be loaded', bad: true }));
  }, [dispatch]);
  const { clip, clipName, loop, calibrationVolts, quality, guarded, cabinet } = state;
  const slots = state.history.present;
  const dur = status?.durationSeconds ?? 0;
  const load = status?.loadFraction;
  const say = (text: string) => dispatch({ type: 'say', text });
  const chooseCabinet = async (key: string, file?: File) => {
    dispatch({ type: 'cabinet', key });
    if (key === 'off') {
      port.setCabinet(null, 48000);
      return;
    }
    try {
      const bytes = file ? await file.arrayBuffer() : await (await fetch(IMPULSES[key]!)).arrayBuffer();
      const c = await port.decode(bytes, key);
      port.setCabinet(c.samples, c.sampleRateHz);
    } catch (err) {
      dispatch({ type: 'say', text: `cabinet response: ${(err as Error).message}`, bad: true });
      dispatch({ type: 'cabinet', key: 'off' });
    }
  };
  return (
    <section className="panel listen" aria-labelledby="listen-h">
      <h2 id="listen-h">Listen</h2>
      <div className="row">
        <label className="inline-label">
          Demo clip
          <select
            value={clips.find((c) => c.title === clipName)?.name ?? ''}
            onChange={(e) => {
              const d = clips.find((c) => c.name === e.target.value);
              if (d) void chooseDemo(d);
            }}
            data-testid="demo-select"
          >
            <option value="" disabled>
              choose…
            </option>
            {clips.map((c) => (
              <option key={c.name} value={c.name} title={c.description}>
                {c.title}
              </option>
            ))}
          </select>
        </label>
        <label className="button">
          Open audio file…
          <input
            type="file"
            accept="audio/*,.wav,.flac,.mp3,.ogg"
            data-testid="audio-file"
            className="visually-hidden"
            onChange={(e) => {
              const f = e.target.files?.[0];
              if (f) void openAudioFile(f);
              e.target.value = '';
            }}
          />
        </label>
        <span className="fine">or drop a file anywhere</span>
      </div>
      <p className="fine">{clip ? `${clipName}: drag on the waveform to loop a region` : 'no clip yet'}</p>
      <Waveform
        samples={clip?.samples ?? null}
        duration={dur}
        loop={loop}
        onLoop={(r) => dispatch({ type: 'loop', region: r })}
        position={() => port.positionSeconds()}
      />
      <div className="row">
        <div className="calibration">
          <ValueField
            label="Input calibration (volts at full scale)"
            unit="volts"
            value={calibrationVolts}
            snap="off"
            onCommit={(v) => {
              const bad = calibrationProblem(v);
              if (!bad) dispatch({ type: 'calibration', volts: v });
              return bad;
            }}
            testId="calibration"
          />
          <FullScaleFromDbu
            onSet={(v, dbu) => {
              dispatch({ type: 'calibration', volts: v });
              say(`Calibration set from the interface's maximum input level, ${dbu >= 0 ? '+' : ''}${dbu} dBu: ${formatVolts(v)} peak at full scale.`);
            }}
          />
        </div>
        <Meters port={port} voltsAtFullScale={calibrationVolts} />
      </div>
      <div className="row">
        <label className="inline-label">
          Cabinet
          <select value={cabinet.startsWith('file:') ? 'file' : cabinet} onChange={(e) => void chooseCabinet(e.target.value)}>
            <option value="off">off (direct)</option>
            {Object.keys(IMPULSES).map((k) => (
              <option key={k} value={k}>
                {k.replace('/impulses/', '').replace('.wav', '')}
              </option>
            ))}
            {cabinet.startsWith('file:') && <option value="file">{cabinet.slice(5)}</option>}
          </select>
        </label>
        <label className="button">
          Load response…
          <input
            type="file"
            accept="audio/*,.wav"
            className="visually-hidden"
            onChange={(e) => {
              const f = e.target.files?.[0];
              if (f) void chooseCabinet(`file:${f.name}`, f);
              e.target.value = '';
            }}
          />
        </label>
        <label className="inline-label">
          Quality
          <select value={quality} onChange={(e) => dispatch({ type: 'quality', factor: Number(e.target.value) as OversamplingFactor })}>
            {LIVE_FACTORS.map((q) => (
              <option key={q} value={q}>
                {QUALITY_LABELS[q] ?? `${q}× oversampled`}
              </option>
            ))}
          </select>
        </label>
        <label
          className="inline-label"
          title="Lower the live quality by itself when the audio thread stays near its limit (dropouts are clicks, which can be loud)"
        >
          <input type="checkbox" checked={guarded} onChange={(e) => dispatch({ type: 'guarded', on: e.target.checked })} /> lower quality on overload
        </label>
        <span className={`fine${load != null && load > 0.8 ? ' warn' : ''}`}>
          {status?.idle ? 'processor idle (resumes on play, live input or an edit)' : <>processor load {load != null ? `${Math.round(load * 100)} %` : '—'}</>}{' '}
          ({status?.engine ?? ''}){load != null && load > 0.8 ? ' — near the limit: a lower quality avoids dropouts' : ''}
        </span>
      </div>
      <ClientPack clip={clip} loop={loop} designA={slots.A} designB={slots.B} voltsAtFullScale={calibrationVolts} />
      <LiveControls />
    </section>
  );
}

/** Sets the calibration from an interface's maximum input level (spec sheets give it in dBu). */
function FullScaleFromDbu({ onSet }: { onSet: (volts: number, dbu: number) => void }): ReactElement {
  const [text, setText] = useState('');
  const [error, setError] = useState<string | null>(null);
  const apply = () => {
    const r = parseDbu(text);
    if (r.ok === false) {
      setError(r.reason);
      return;
    }
    setError(null);
    onSet(dbuToPeakVolts(r.dbu), r.dbu);
  };
  return (
    <div className="field dbu">
      <label htmlFor="dbu-input">or from the interface's max input level</label>
      <div className="value-row">
        <input
          id="dbu-input"
          data-testid="dbu"
          value={text}
          placeholder="+9"
          size={6}
          aria-invalid={error !== null}
          className={error ? 'invalid' : ''}
          onChange={(e) => setText(e.target.value)}
          onKeyDown={(e) => {
            if (e.key === 'Enter') apply();
          }}
        />
        <span className="unit">dBu</span>
        <button type="button" onClick={apply}>
          Use
        </button>
      </div>
      <div className={error ? 'msg error' : 'msg'} role={error ? 'alert' : undefined}>
        {error ?? 'as printed in its specifications'}
      </div>
    </div>
  );
}
