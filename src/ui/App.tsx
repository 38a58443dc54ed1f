// The audition workspace: schematic and part editor, operating point, listening, plots.
import { useCallback, useEffect, useMemo, useRef, useState, type ReactElement } from 'react';
import { DEFAULT_INPUT_VOLTS_AT_FULL_SCALE, validateDesign, type Design, type Part } from '../dsp/circuit/design.ts';
import { parseNetlist, NETLIST_SCHEMA } from '../dsp/circuit/netlist.ts';
import { netlistToDesign } from '../dsp/circuit/netlist-design.ts';
import { TEMPLATES } from '../dsp/circuit/templates.ts';
import type { Monitor, Slot } from '../dsp/realtime/messages.ts';
import type { OversamplingFactor } from '../dsp/oversampling/oversampler.ts';
import { DEFAULT_LIVE_FACTOR, LIVE_FACTORS } from '../dsp/realtime/dual-slot-engine.ts';
import type { Finding } from '../dsp/analysis/wiring-check.ts';
import { modelDesign, SheetService, type WorstCaseView } from './model/worst-case.ts';
import { probeNodes } from './model/probes.ts';
import { EnginePort } from './audio-engine-port.ts';
import { calibrationProblem, dbuToPeakVolts, parseDbu } from './model/calibration.ts';
import { formatVolts } from './model/meters.ts';
import type { LiveInputDevice, LiveInputOptions } from '../audio/index.ts';
import type { AudioStatus, LoopRegion, SourceClip } from './audio-port.ts';
import { canRedo, canUndo, pushHistory, redo, startHistory, undo, type History } from './model/history.ts';
import { applyTemplate, copySlot, differingParts, editPart, editSupplyVolts, findPart, initialSlots, withSlot, type Slots } from './model/workspace.ts';
import { CAUTION_KEY, STORAGE_KEY, parseWorkspace, serializeWorkspace } from './model/storage.ts';
import { designFileName, exportDesignText, importDesignText } from './model/design-file.ts';
import { decodeDesignHash, encodeDesignHash } from './model/share.ts';
import { computeOperatingReport, type OperatingReport } from './model/operating.ts';
import { designResponses, type Responses } from './model/response.ts';
import { Schematic } from './Schematic.tsx';
import { PartEditor, ValueField } from './PartEditor.tsx';
import { OperatingPanel } from './OperatingPanel.tsx';
import { TubeFitPanel } from './TubeFitPanel.tsx';
import { ResponsePlot, ScopePlot, SpectrumPlot } from './Plots.tsx';
import { ClientPack, Meters, Waveform, type DemoClip } from './Listen.tsx';
import { CautionDialog } from './Cautions.tsx';

const IMPULSES = import.meta.glob('/impulses/*.wav', { query: '?url', import: 'default', eager: true }) as Record<string, string>;
const QUALITIES = LIVE_FACTORS;
/** Measured alias levels (npx tsx bench/alias.bench.ts, pentode-triode, 1 V peak sines near 1 / 2.5 kHz). */
const QUALITY_LABELS: Partial<Record<OversamplingFactor, string>> = {
  1: 'draft (1×)',
  2: '2× (aliases about −55 / −48 dB)',
  4: '4× (default; aliases about −73 / −64 dB)',
  8: '8× (aliases about −72 / −77 dB; heavy)',
};

interface OpState { report: OperatingReport | null; failure: string | null }

function useDebounced<T>(value: T, ms: number): T {
  const [v, setV] = useState(value);
  useEffect(() => { const t = setTimeout(() => setV(value), ms); return () => clearTimeout(t); }, [value, ms]);
  return v;
}

function loadInitial(): History<Slots> {
  const saved = typeof localStorage !== 'undefined' ? parseWorkspace(localStorage.getItem(STORAGE_KEY)) : null;
  return startHistory(saved?.slots ?? initialSlots());
}

export function App(): ReactElement {
  const port = useMemo(() => new EnginePort(), []);
  const [history, setHistory] = useState<History<Slots>>(loadInitial);
  const slots = history.present;
  const [active, setActive] = useState<Slot>(() => parseWorkspace(localStorage.getItem(STORAGE_KEY))?.active ?? 'A');
  const [monitor, setMonitorState] = useState<Monitor>(active);
  const [selected, setSelected] = useState<string | null>(null);
  const [message, setMessage] = useState<{ text: string; bad: boolean; action?: { label: string; run: () => void } } | null>(null);
  const [status, setStatus] = useState<AudioStatus | null>(null);
  const [clips, setClips] = useState<DemoClip[]>([]);
  const [clip, setClip] = useState<SourceClip | null>(null);
  const [clipName, setClipName] = useState('');
  const [calibration, setCalibration] = useState(DEFAULT_INPUT_VOLTS_AT_FULL_SCALE);
  const [keepValues, setKeepValues] = useState(false);
  const [loop, setLoop] = useState<LoopRegion | null>(null);
  const [matched, setMatched] = useState(true);
  const [quality, setQuality] = useState<OversamplingFactor>(DEFAULT_LIVE_FACTOR);
  const [guarded, setGuarded] = useState(true);
  const [liveChoice, setLiveChoice] = useState<LiveInputOptions>({ channel: 'mix' });
  const [inputs, setInputs] = useState<LiveInputDevice[]>([]);
  const [cabinet, setCabinet] = useState<string>('off');
  const [caution, setCaution] = useState<'first-run' | 'live' | null>(() => (localStorage.getItem(CAUTION_KEY) ? null : 'first-run'));
  const [scopeNodes, setScopeNodes] = useState<string[] | null>(null);
  const [dragging, setDragging] = useState(false);
  const design = slots[active];
  const part = selected ? findPart(design, selected) ?? null : null;
  const say = (text: string, bad = false, action?: { label: string; run: () => void }) => setMessage({ text, bad, ...(action ? { action } : {}) });

  // shared link in the hash wins over the autosave (into slot A, undoable)
  useEffect(() => {
    void decodeDesignHash(location.hash).then((r) => {
      if (r.ok === true) { setHistory((h) => pushHistory(h, withSlot(h.present, 'A', r.design))); say(`Opened the shared design "${r.design.name}" in slot A.`); }
      else if (r.ok === false) say(`${r.reason} — kept your current design.`, true);
    });
    fetch('/demo/clips.json').then((r) => r.json() as Promise<{ clips: DemoClip[] }>).then((j) => setClips(j.clips)).catch(() => say('demo clips could not be loaded', true));
    return port.subscribe(setStatus);
  }, [port]);

  // the model runs each slot's design with its power-supply estimate as B+ (as the command line does)
  useEffect(() => { port.setDesign('A', modelDesign(slots.A)); port.setDesign('B', modelDesign(slots.B)); }, [port, slots]);
  useEffect(() => { localStorage.setItem(STORAGE_KEY, serializeWorkspace({ slots, active })); }, [slots, active]);
  useEffect(() => { port.setMonitor(monitor); }, [port, monitor]);
  useEffect(() => { port.setLoudnessMatch(matched); }, [port, matched]);
  useEffect(() => { port.setQuality(quality); }, [port, quality]);
  useEffect(() => { port.setOverloadGuard(guarded); }, [port, guarded]);
  // the processor muted live input for safety: say so where it cannot be missed
  const safetyNote = status?.safetyNote ?? null;
  useEffect(() => { if (safetyNote) say(safetyNote, true); }, [safetyNote]);
  // the port lowered the quality itself (sustained overload): follow it and say why
  const lowered = status?.qualityNote ? status.qualityFactor : null;
  useEffect(() => {
    if (lowered === null || !status?.qualityNote) return;
    setQuality(lowered);
    say(status.qualityNote);
    // eslint-disable-next-line react-hooks/exhaustive-deps -- once per step the port takes
  }, [lowered]);
  useEffect(() => { port.setInputCalibration(calibration); }, [port, calibration]);

  // operating point of the slot on screen, recomputed shortly after edits
  const opDesign = useDebounced(design, 40);
  const op: OpState = useMemo(() => {
    const r = computeOperatingReport(modelDesign(opDesign));
    if (!r.ok) return { report: null, failure: `No operating point: ${r.reason}` };
    return { report: r.report, failure: null };
  }, [opDesign]);
  // the worst-case sheet (warm idle, cold start at the unloaded B+, maximum input): the one
  // `check` and `parts` print; it takes a few hundred ms, so it follows edits after a pause
  // (in a worker: sheet.worker.ts)
  const sheetDesign = useDebounced(design, 300);
  const [sheet, setSheet] = useState<{ design: Design; view: WorstCaseView } | null>(null);
  const sheets = useMemo(() => new SheetService((d, view) => setSheet(view ? { design: d, view } : null)), []);
  useEffect(() => () => sheets.dispose(), [sheets]);
  useEffect(() => { sheets.request(sheetDesign); }, [sheets, sheetDesign]);
  const sheetNow = sheet && sheet.design === design ? sheet.view : null;
  const findings: Finding[] = sheetNow ? sheetNow.result.findings.filter((f) => f.severity !== 'note') : [];
  useEffect(() => {
    const w = window as unknown as { __vwReadyMs?: number };
    if (op.report && w.__vwReadyMs === undefined) w.__vwReadyMs = performance.now();
  }, [op]);

  const respA = useDebounced(slots.A, 150), respB = useDebounced(slots.B, 150);
  const responses = useMemo(() => {
    const one = (d0: Design): Responses => { const d = modelDesign(d0); const r = computeOperatingReport(d); return designResponses(d, r.ok ? r.op : null); };
    const a = one(respA);
    return { A: a, B: respB === respA ? a : one(respB) };
  }, [respA, respB]);

  const commit = useCallback((next: Slots) => setHistory((h) => pushHistory(h, next)), []);
  const onPart = (p: Part): string | null => {
    const r = editPart(slots, active, p);
    if (!r.ok) return r.reason;
    commit(r.slots);
    return null;
  };
  const onSupply = (volts: number): string | null => {
    const r = editSupplyVolts(slots, active, volts);
    if (!r.ok) return r.reason;
    commit(r.slots);
    return null;
  };
  const switchSlot = (s: Monitor) => { setMonitorState(s); if (s !== 'dry') setActive(s); };

  // a clip never changes the input calibration by itself: a demo clip's own figure is offered
  const loadClip = async (c: SourceClip, name: string) => {
    setClip(c); setClipName(name); setLoop(null); port.setLoop(null);
    port.setSource(c);
    const v = c.voltsAtFullScale;
    if (v && Math.abs(v - calibration) > 1e-9 * v) {
      say(`${name} was recorded for ${formatVolts(v)} peak at full scale; the input calibration stays ${formatVolts(calibration)}.`, false, { label: `Set the calibration to ${formatVolts(v)}`, run: () => { setCalibration(v); say(`Input calibration set to ${formatVolts(v)} at full scale, the clip's own figure.`); } });
    }
  };
  // a recorded take becomes the clip: the same playing through A, B and dry, and the client pack
  const takeToClip = (c: SourceClip | null) => {
    if (!c) { say('The take was empty: nothing was recorded.', true); return; }
    void loadClip({ ...c, voltsAtFullScale: calibration }, c.name);
    say(`Recorded ${c.name}, ${(c.samples.length / c.sampleRateHz).toFixed(1)} s of the input (before the circuit): it is now the clip, so A, B and dry play the same take.`);
  };
  useEffect(() => { port.onTakeEnded((c) => takeToClip(c)); });
  const chooseDemo = async (name: string) => {
    const d = clips.find((c) => c.name === name);
    if (!d) return;
    try {
      const bytes = await (await fetch(`/demo/${d.file}`)).arrayBuffer();
      const c = await port.decode(bytes, d.title);
      await loadClip({ ...c, voltsAtFullScale: d.voltsAtFullScale }, d.title);
    } catch (err) { say(`could not load ${d.title}: ${(err as Error).message}`, true); }
  };
  const openAudioFile = async (f: File) => {
    try {
      const c = await port.decode(await f.arrayBuffer(), f.name);
      await loadClip(c, f.name);
      say(`Loaded ${f.name} (${c.sampleRateHz} Hz, ${(c.samples.length / c.sampleRateHz).toFixed(1)} s). Set the input calibration to your pickup's level.`);
    } catch { say(`${f.name}: the browser could not decode this as audio`, true); }
  };
  const openDesignFile = async (f: File) => {
    const text = await f.text();
    let doc: unknown = null;
    try { doc = JSON.parse(text); } catch { /* importDesignText says why */ }
    if (typeof doc === 'object' && doc !== null && (doc as { schema?: unknown }).schema === NETLIST_SCHEMA) {
      // a netlist (ours or another tool's) is a circuit too: it becomes a design, saying what it lacks
      try {
        const conv = netlistToDesign(parseNetlist(doc), f.name.replace(/\.json$/i, ''));
        const d = validateDesign(conv.design);
        commit(withSlot(slots, active, d));
        say(`Imported the netlist ${f.name} into slot ${active}. A netlist lacks some of a design: ${conv.lost.join('; ')}.`);
      } catch (err) { say(`${f.name}: ${(err as Error).message} — your current design was kept.`, true); }
      return;
    }
    const r = importDesignText(text, f.name);
    if (!r.ok) { say(`${r.reason} — your current design was kept.`, true); return; }
    commit(withSlot(slots, active, r.design));
    say(`Imported "${r.design.name}" into slot ${active}.`);
  };
  const onDropFiles = (files: FileList) => {
    const f = files[0];
    if (!f) return;
    if (f.name.toLowerCase().endsWith('.json')) void openDesignFile(f); else void openAudioFile(f);
  };
  const exportDesign = () => {
    const blob = new Blob([exportDesignText(design)], { type: 'application/json' });
    const a = document.createElement('a');
    a.href = URL.createObjectURL(blob); a.download = designFileName(design); a.click();
    setTimeout(() => URL.revokeObjectURL(a.href), 1000);
  };
  // the link goes to the clipboard, not the address bar: a reload must not bring back this
  // snapshot over later edits
  const share = async () => {
    const h = await encodeDesignHash(design);
    const url = `${location.origin}${location.pathname}${location.search}#${h}`;
    try { await navigator.clipboard.writeText(url); say('Link to this design copied to the clipboard.'); } catch { say(`Copy this link to share the design: ${url}`); }
  };
  const chooseCabinet = async (key: string, file?: File) => {
    setCabinet(key);
    if (key === 'off') { port.setCabinet(null, 48000); return; }
    try {
      const bytes = file ? await file.arrayBuffer() : await (await fetch(IMPULSES[key]!)).arrayBuffer();
      const c = await port.decode(bytes, key);
      port.setCabinet(c.samples, c.sampleRateHz);
    } catch (err) { say(`cabinet response: ${(err as Error).message}`, true); setCabinet('off'); }
  };
  const startLive = async (options: LiveInputOptions = liveChoice): Promise<boolean> => {
    try {
      await port.startLive(options);
      setInputs(await port.listInputs());
      return true;
    } catch (err) { say(`live input: ${(err as Error).message}`, true); return false; }
  };
  // a different input or channel restarts the live input, muted (as every start is)
  const chooseLive = (next: LiveInputOptions) => {
    setLiveChoice(next);
    void startLive(next).then((ok) => { if (ok) say('Live input restarted on the new choice, muted: unmute (M) when the level is safe.'); });
  };
  const togglePlay = () => { if (status?.playing) port.stop(); else void port.play(); };
  const toggleMute = () => { if (status?.live === 'on') port.setMuted(true); else if (status?.live === 'muted') port.setMuted(false); };

  const keyRef = useRef<(e: KeyboardEvent) => void>(() => {});
  keyRef.current = (e: KeyboardEvent) => {
    const t = e.target as HTMLElement;
    const typing = t.closest('input, select, textarea, [contenteditable]') !== null;
    if ((e.ctrlKey || e.metaKey) && e.key.toLowerCase() === 'z' && !typing) { e.preventDefault(); setHistory(e.shiftKey ? redo : undo); return; }
    if ((e.ctrlKey || e.metaKey) && e.key.toLowerCase() === 'y' && !typing) { e.preventDefault(); setHistory(redo); return; }
    if (e.key.toLowerCase() === 'm' && !e.ctrlKey && !e.metaKey && (!typing || e.altKey)) { e.preventDefault(); if (status?.live !== 'off') port.setMuted(true); return; }
    if (typing || e.ctrlKey || e.metaKey || e.altKey) return;
    if (e.key === 'a' || e.key === 'A') switchSlot('A');
    else if (e.key === 'b' || e.key === 'B') switchSlot('B');
    else if (e.key === 'd' || e.key === 'D') switchSlot('dry');
    else if (e.key === ' ' && !t.closest('button, [role=button], [role=slider]')) { e.preventDefault(); togglePlay(); }
  };
  useEffect(() => { const h = (e: KeyboardEvent) => keyRef.current(e); window.addEventListener('keydown', h); return () => window.removeEventListener('keydown', h); }, []);

  // test hook: only in development builds or a page opened with ?vw-test (the browser tests)
  useEffect(() => {
    if (!import.meta.env.DEV && !new URLSearchParams(location.search).has('vw-test')) return;
    const w = window as unknown as Record<string, unknown>;
    w.__valvewright = { port, slots: () => history.present, active: () => active, sheet: () => (sheetNow ? sheetNow.result : null) };
  });

  const changed = useMemo(() => new Set(differingParts(slots.A, slots.B)), [slots]);
  const probes = probeNodes(design);
  const chosenScope = scopeNodes ?? probes.slice(0, 3);
  const templateKey = Object.entries(TEMPLATES).find(([, t]) => t.name === design.name)?.[0] ?? '';
  const dur = status?.durationSeconds ?? 0;
  const load = status?.loadFraction;

  return (
    <div className={`app${dragging ? ' dragging' : ''}`} onDragOver={(e) => { e.preventDefault(); setDragging(true); }} onDragLeave={(e) => { if (e.currentTarget === e.target) setDragging(false); }} onDrop={(e) => { e.preventDefault(); setDragging(false); onDropFiles(e.dataTransfer.files); }}>
      <header className="top">
        <h1>Valvewright <span className="sub">audition bench</span></h1>
        <label className="inline-label">Starting circuit
          <select value={templateKey} data-testid="template-select" onChange={(e) => {
            const t = TEMPLATES[e.target.value]; if (!t) return;
            if (keepValues) { const r = applyTemplate(design, t); commit(withSlot(slots, active, r.design)); say(`Slot ${active} is now "${t.name}" with your values of ${r.kept.length} shared parts kept.`); }
            else { commit(withSlot(slots, active, t)); say(`Slot ${active} is now "${t.name}", exactly as the command line has it.`); }
            setSelected(null);
          }}>
            {templateKey === '' && <option value="">{design.name}</option>}
            {Object.entries(TEMPLATES).map(([k, t]) => <option key={k} value={k}>{t.name}</option>)}
          </select>
        </label>
        <label className="inline-label" title="When choosing a starting circuit, keep your values of the parts it shares with the present one"><input type="checkbox" checked={keepValues} onChange={(e) => setKeepValues(e.target.checked)} /> keep my values</label>
        <div className="toolbar" role="toolbar" aria-label="Design file">
          <button type="button" onClick={() => setHistory(undo)} disabled={!canUndo(history)} title="Ctrl+Z">Undo</button>
          <button type="button" onClick={() => setHistory(redo)} disabled={!canRedo(history)} title="Ctrl+Shift+Z">Redo</button>
          <button type="button" onClick={exportDesign}>Export JSON</button>
          <label className="button" title="A design file, or a netlist-v1 file">Import JSON<input type="file" accept=".json,application/json" data-testid="import-design" className="visually-hidden" onChange={(e) => { const f = e.target.files?.[0]; if (f) void openDesignFile(f); e.target.value = ''; }} /></label>
          <button type="button" onClick={() => void share()}>Copy link</button>
          <button type="button" onClick={() => setCaution('first-run')}>Safety</button>
        </div>
      </header>
      {message && <p className={`banner${message.bad ? ' bad' : ''}`} role={message.bad ? 'alert' : 'status'} data-testid="message">{message.text} {message.action && <button type="button" onClick={message.action.run} data-testid="message-action">{message.action.label}</button>} <button type="button" className="link" onClick={() => setMessage(null)} aria-label="Dismiss message">×</button></p>}

      <main className="grid">
        <section className="panel circuit" aria-labelledby="circuit-h">
          <h2 id="circuit-h">{design.name} <span className="sub">slot {active}{changed.size ? ` · ${changed.size} part${changed.size === 1 ? "" : "s"} differ${changed.size === 1 ? "s" : ""} from slot ${active === 'A' ? 'B' : 'A'}` : ''}</span></h2>
          <Schematic design={design} selectedId={selected} changedIds={changed} onSelect={setSelected} />
        </section>

        <div className="side">
          <PartEditor design={design} part={part} rating={sheetNow?.rows.find((r) => r.ref === selected) ?? null} sheetPending={!sheetNow} onChange={onPart} onSupplyVolts={onSupply} />
          <OperatingPanel report={op.report} failure={op.failure} findings={findings} slot={active} supply={sheetNow?.result.supply ? { loadedVolts: sheetNow.result.supply.loadedVolts, unloadedVolts: sheetNow.result.supply.unloadedVolts } : null} />
          <TubeFitPanel design={design} onDesign={(d) => commit(withSlot(slots, active, d))} />
        </div>

        <section className="panel listen" aria-labelledby="listen-h">
          <h2 id="listen-h">Listen</h2>
          <div className="row">
            <label className="inline-label">Demo clip
              <select value={clips.find((c) => c.title === clipName)?.name ?? ''} onChange={(e) => void chooseDemo(e.target.value)} data-testid="demo-select">
                <option value="" disabled>choose…</option>
                {clips.map((c) => <option key={c.name} value={c.name} title={c.description}>{c.title}</option>)}
              </select>
            </label>
            <label className="button">Open audio file…<input type="file" accept="audio/*,.wav,.flac,.mp3,.ogg" data-testid="audio-file" className="visually-hidden" onChange={(e) => { const f = e.target.files?.[0]; if (f) void openAudioFile(f); e.target.value = ''; }} /></label>
            <span className="fine">or drop a file anywhere</span>
          </div>
          <div className="row transport">
            <button type="button" className="primary" onClick={togglePlay} disabled={!clip} aria-keyshortcuts="Space" data-testid="play">{status?.playing ? 'Stop' : 'Play'}</button>
            <button type="button" onClick={() => { setLoop(null); port.setLoop(null); }} disabled={!loop}>Clear loop</button>
            <span className="fine">{clip ? `${clipName} · ${dur.toFixed(1)} s${loop ? ` · loop ${loop.startSeconds.toFixed(2)}–${loop.endSeconds.toFixed(2)} s` : ' · drag on the waveform to loop a region'}` : 'no clip yet'}{status?.rendering ? ' · rendering…' : ''}</span>
          </div>
          <Waveform samples={clip?.samples ?? null} duration={dur} loop={loop} onLoop={(r) => { setLoop(r); port.setLoop(r); }} position={() => port.positionSeconds()} />
          <div className="row">
            <div className="calibration">
              <ValueField label="Input calibration (volts at full scale)" unit="volts" value={calibration} snap="off" onCommit={(v) => { const bad = calibrationProblem(v); if (!bad) setCalibration(v); return bad; }} testId="calibration" />
              <FullScaleFromDbu onSet={(v, dbu) => { setCalibration(v); say(`Calibration set from the interface's maximum input level, ${dbu >= 0 ? '+' : ''}${dbu} dBu: ${formatVolts(v)} peak at full scale.`); }} />
            </div>
            <Meters port={port} voltsAtFullScale={calibration} />
          </div>
          <div className="row ab" role="group" aria-label="Compare">
            <div className="seg" role="radiogroup" aria-label="What you hear">
              {(['A', 'B', 'dry'] as const).map((s) => <button key={s} type="button" role="radio" aria-checked={monitor === s} className={`slot-${s}`} onClick={() => switchSlot(s)} aria-keyshortcuts={s === 'dry' ? 'D' : s}>{s === 'dry' ? 'Dry' : s}</button>)}
            </div>
            <button type="button" onClick={() => { commit(copySlot(slots, 'A')); say('Copied slot A to slot B.'); }}>Copy A → B</button>
            <label className="inline-label"><input type="checkbox" checked={matched} onChange={(e) => setMatched(e.target.checked)} /> loudness-matched</label>
            <span className="offset" data-testid="offset" title="Measured from the sound both slots make (BS.1770 K-weighting, last 3 s); the output loudness is measured the same way on what you hear">{status?.offsetDb != null ? `B is ${status.offsetDb >= 0 ? '+' : ''}${status.offsetDb.toFixed(1)} dB against A${matched ? ` (B gain ${status.matchGainDb >= 0 ? '+' : ''}${status.matchGainDb.toFixed(1)} dB)` : ''}` : 'level offset: — (play something)'}</span>
            <span className="offset" data-testid="output-lufs">output {status?.outputLufs != null ? `${status.outputLufs.toFixed(1)} LUFS` : '—'} (3 s)</span>
          </div>
          <div className="row">
            <label className="inline-label">Cabinet
              <select value={cabinet.startsWith('file:') ? 'file' : cabinet} onChange={(e) => void chooseCabinet(e.target.value)}>
                <option value="off">off (direct)</option>
                {Object.keys(IMPULSES).map((k) => <option key={k} value={k}>{k.replace('/impulses/', '').replace('.wav', '')}</option>)}
                {cabinet.startsWith('file:') && <option value="file">{cabinet.slice(5)}</option>}
              </select>
            </label>
            <label className="button">Load response…<input type="file" accept="audio/*,.wav" className="visually-hidden" onChange={(e) => { const f = e.target.files?.[0]; if (f) void chooseCabinet(`file:${f.name}`, f); e.target.value = ''; }} /></label>
            <label className="inline-label">Quality
              <select value={quality} onChange={(e) => setQuality(Number(e.target.value) as OversamplingFactor)}>
                {QUALITIES.map((q) => <option key={q} value={q}>{QUALITY_LABELS[q] ?? `${q}× oversampled`}</option>)}
              </select>
            </label>
            <label className="inline-label" title="Lower the live quality by itself when the audio thread stays near its limit (dropouts are clicks, which can be loud)"><input type="checkbox" checked={guarded} onChange={(e) => setGuarded(e.target.checked)} /> lower quality on overload</label>
            <span className={`fine${load != null && load > 0.8 ? ' warn' : ''}`}>{status?.idle ? 'processor idle (resumes on play, live input or an edit)' : <>processor load {load != null ? `${Math.round(load * 100)} %` : '—'}</>} ({status?.engine ?? ''}){load != null && load > 0.8 ? ' — near the limit: a lower quality avoids dropouts' : ''}</span>
          </div>
          <ClientPack clip={clip} loop={loop} designA={slots.A} designB={slots.B} voltsAtFullScale={calibration} />
          <div className="row live">
            {status?.live === 'off' || !status ? (
              <button type="button" onClick={() => setCaution('live')}>Live input…</button>
            ) : (
              <>
                <button type="button" className={status.live === 'on' ? 'danger' : ''} onClick={toggleMute} aria-keyshortcuts="M" data-testid="mute">{status.live === 'on' ? 'Mute (M)' : 'Unmute'}</button>
                <button type="button" onClick={() => port.stopLive()}>Stop live input</button>
                <span className="fine">{status.live === 'muted' ? 'live input muted' : 'live input on'}{status.message ? ` · ${status.message}` : ''}</span>
                <LatencyNote port={port} />
                <TakeButton port={port} onTake={(c) => takeToClip(c)} />
                {inputs.length > 1 && (
                  <label className="inline-label">Input
                    <select value={liveChoice.deviceId ?? ''} onChange={(e) => chooseLive({ ...liveChoice, deviceId: e.target.value || undefined })}>
                      <option value="">browser default</option>
                      {inputs.map((d) => <option key={d.deviceId} value={d.deviceId}>{d.label}</option>)}
                    </select>
                  </label>
                )}
                <label className="inline-label" title="A two-input interface: pick the input the guitar is on (mixed averages both, so one guitar comes in at half level)">Channel
                  <select value={String(liveChoice.channel ?? 'mix')} onChange={(e) => chooseLive({ ...liveChoice, channel: e.target.value === 'mix' ? 'mix' : (Number(e.target.value) as 1 | 2) })}>
                    <option value="mix">both, mixed</option>
                    <option value="1">input 1</option>
                    <option value="2" disabled={status.liveChannels < 2}>input 2</option>
                  </select>
                </label>
              </>
            )}
          </div>
        </section>

        <section className="panel see" aria-labelledby="see-h">
          <h2 id="see-h">See</h2>
          <div className="scope-head">
            <span>Scope, slot {active}: node voltages over the clip</span>
            {probes.map((n) => <label key={n} className="inline-label"><input type="checkbox" checked={chosenScope.includes(n)} onChange={(e) => setScopeNodes(e.target.checked ? [...chosenScope, n] : chosenScope.filter((x) => x !== n))} />{n}</label>)}
          </div>
          <ScopePlot trace={() => port.scope(active)} position={() => port.positionSeconds()} duration={dur} chosen={chosenScope} />
          <div className="plots">
            <ResponsePlot title="Whole circuit, small signal at the operating point" series={[{ name: 'A', curve: responses.A.whole, cls: 'a' }, { name: 'B', curve: responses.B.whole, cls: 'b' }]} note={responses.A.whole ? null : responses.A.reason} />
            <ResponsePlot title="Tone network as the circuit drives and loads it" series={[{ name: 'A', curve: responses.A.tone, cls: 'a' }, { name: 'B', curve: responses.B.tone, cls: 'b' }, { name: 'A from an ideal source', curve: responses.A.toneIdeal, cls: 'ideal' }]} note={responses.A.tone ? toneNote(responses.A) : responses.A.reason} />
            <SpectrumPlot read={(into) => port.spectrum(into)} />
          </div>
        </section>
      </main>
      <footer className="keys fine">Keys: A / B / D switch what you hear · Space play or stop · M mute live input · Ctrl+Z undo · Ctrl+Shift+Z redo</footer>
      {caution && <CautionDialog kind={caution} onAccept={() => { if (caution === 'first-run') localStorage.setItem(CAUTION_KEY, '1'); else void startLive(); setCaution(null); }} onCancel={caution === 'live' ? () => setCaution(null) : undefined} />}
    </div>
  );
}

/** What the tone plot shows: parts, the source impedance and the control's corners at both ends. */
function toneNote(r: Responses): string {
  const e = r.toneEnds;
  const hz = (f: number | null) => (f === null ? 'none below 200 kHz' : f >= 1000 ? `${(f / 1000).toFixed(1)} kHz` : `${f.toFixed(0)} Hz`);
  return `parts ${r.toneParts.join(', ')}${r.toneSourceOhms !== null ? `; driven through ${(r.toneSourceOhms / 1e3).toFixed(0)} k` : ''}${e ? `; ${e.potId} corner ${hz(e.atPosition0Hz)} at 0, ${hz(e.atPosition1Hz)} at 10` : ''}`;
}

/** Sets the calibration from an interface's maximum input level (spec sheets give it in dBu). */
function FullScaleFromDbu({ onSet }: { onSet: (volts: number, dbu: number) => void }): ReactElement {
  const [text, setText] = useState('');
  const [error, setError] = useState<string | null>(null);
  const apply = () => {
    const r = parseDbu(text);
    if (r.ok === false) { setError(r.reason); return; }
    setError(null);
    onSet(dbuToPeakVolts(r.dbu), r.dbu);
  };
  return (
    <div className="field dbu">
      <label htmlFor="dbu-input">or from the interface's max input level</label>
      <div className="value-row">
        <input id="dbu-input" data-testid="dbu" value={text} placeholder="+9" size={6} aria-invalid={error !== null} className={error ? 'invalid' : ''}
          onChange={(e) => setText(e.target.value)} onKeyDown={(e) => { if (e.key === 'Enter') apply(); }} />
        <span className="unit">dBu</span>
        <button type="button" onClick={apply}>Use</button>
      </div>
      <div className={error ? 'msg error' : 'msg'} role={error ? 'alert' : undefined}>{error ?? 'as printed in its specifications'}</div>
    </div>
  );
}

/** The live path's delay, refreshed once a second (the output part can change with the device). */
function LatencyNote({ port }: { port: EnginePort }): ReactElement | null {
  const [lat, setLat] = useState(() => port.liveLatency());
  useEffect(() => { const t = setInterval(() => setLat(port.liveLatency()), 1000); return () => clearInterval(t); }, [port]);
  if (!lat) return null;
  const ms = (s: number) => (s * 1e3 < 1 ? (s * 1e3).toFixed(2) : (s * 1e3).toFixed(0));
  return (
    <span className={`fine${lat.totalSeconds > 0.02 ? ' warn' : ''}`} data-testid="latency" title="Input device + the circuit's oversampling filters + the browser's output buffering. Above about 10-20 ms playing feels late; a smaller buffer in the system's audio settings helps.">
      delay about {ms(lat.totalSeconds)} ms (input {ms(lat.inputSeconds)}, circuit {ms(lat.processingSeconds)}, output {ms(lat.outputSeconds)})
    </span>
  );
}

/** Record the live input as a take; stopping makes it the clip. */
function TakeButton({ port, onTake }: { port: EnginePort; onTake: (c: SourceClip | null) => void }): ReactElement {
  const [seconds, setSeconds] = useState<number | null>(() => port.takeSeconds());
  useEffect(() => { const t = setInterval(() => setSeconds(port.takeSeconds()), 250); return () => clearInterval(t); }, [port]);
  const toggle = () => {
    if (seconds === null) { port.startTake(); setSeconds(0); return; }
    setSeconds(null);
    void port.stopTake().then(onTake);
  };
  return (
    <button type="button" data-testid="take" className={seconds !== null ? 'danger' : ''} onClick={toggle} title="Records the input itself (the DI, before the circuit), so the take can be played through A, B and dry and rendered for a client">
      {seconds === null ? 'Record take' : `Stop take (${seconds.toFixed(1)} s)`}
    </button>
  );
}
