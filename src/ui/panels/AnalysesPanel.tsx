// A panel for each analysis the command line has: supply, spread, parts list and SPICE export,
// voicing to a target. The heavy work runs in a worker (analysis.worker.ts); every change to the
// design made here is an undoable edit.
import { useEffect, useMemo, useState, type ReactElement } from 'react';
import { designCircuit, type Design, type Part, type PowerSupplySection } from '../../dsp/circuit/design.ts';
import { identifyToneNetwork, logFrequencies } from '../../dsp/analysis/ac.ts';
import type { SpreadSummary, Stats } from '../../dsp/analysis/spread.ts';
import type { RectifierTopology } from '../../dsp/analysis/supply.ts';
import { formatValue } from '../../dsp/parts/values.ts';
import type { AnalysisResult, ListenClip, SupplyReport, VoicingReport } from '../analysis-protocol.ts';
import { ValueField } from '../PartEditor.tsx';
import { useAnalysis } from '../store/analysis.ts';
import { download } from '../store/actions.ts';
import { useDebounced } from '../store/hooks.ts';
import { useWorkspace } from '../store/context.ts';
import { playableProblem } from '../store/workspace-store.ts';

type Sub = 'supply' | 'spread' | 'files' | 'voicing';
const SUB_NAMES: Record<Sub, string> = { supply: 'Supply', spread: 'Spread', files: 'Parts list & SPICE', voicing: 'Voicing' };

export function AnalysesPanel(): ReactElement {
  const [sub, setSub] = useState<Sub>('supply');
  const { state } = useWorkspace();
  const design = state.history.present[state.active];
  const problem = playableProblem(design);
  return (
    <section className="panel analyses" aria-labelledby="analyses-h">
      <h2 id="analyses-h">
        Analyses <span className="sub">slot {state.active}</span>
      </h2>
      <div className="seg" role="tablist" aria-label="Analysis">
        {(Object.keys(SUB_NAMES) as Sub[]).map((k) => (
          <button key={k} type="button" role="tab" aria-selected={sub === k} aria-pressed={sub === k} onClick={() => setSub(k)}>
            {SUB_NAMES[k]}
          </button>
        ))}
      </div>
      {problem ? (
        <p className="warn">The analyses need a circuit that can play: {problem}.</p>
      ) : (
        <>
          {sub === 'supply' && <SupplyPanel design={design} />}
          {sub === 'spread' && <SpreadPanel design={design} />}
          {sub === 'files' && <FilesPanel design={design} />}
          {sub === 'voicing' && <VoicingPanel design={design} />}
        </>
      )}
    </section>
  );
}

const v = (x: number, d = 1) => `${x.toFixed(d)} V`;

/** The clip for listening renders (the first seconds), or null. */
function useListenClip(): ListenClip | null {
  const { state } = useWorkspace();
  return state.clip ? { samples: state.clip.samples, sampleRateHz: state.clip.sampleRateHz, voltsAtFullScale: state.calibrationVolts } : null;
}

function AudioResult({ result }: { result: { url: string; label: string } | null }): ReactElement | null {
  if (!result) return null;
  return (
    <div className="inline listen-result">
      <span className="fine">{result.label}:</span>
      {/* starts at half volume: renders sit under a -1 dBFS limiter, which can still be loud */}
      <audio
        controls
        src={result.url}
        ref={(a) => {
          if (a) a.volume = 0.5;
        }}
        data-testid="analysis-audio"
      />
    </div>
  );
}

function useAudioUrl(): [{ url: string; label: string } | null, (r: AnalysisResult) => void] {
  const [audio, setAudio] = useState<{ url: string; label: string } | null>(null);
  useEffect(
    () => () => {
      if (audio) URL.revokeObjectURL(audio.url);
    },
    [audio],
  );
  return [
    audio,
    (r) => {
      if (r.type === 'audio') setAudio({ url: URL.createObjectURL(new Blob([r.wav as Uint8Array<ArrayBuffer>], { type: 'audio/wav' })), label: r.label });
    },
  ];
}

/** A starting supply section that gives about the design's B+ (bridge of silicon diodes, one RC stage). */
export function defaultSupplySection(d: Design): PowerSupplySection {
  return {
    // peak = 1.414 x RMS less two diode drops (common practice); 7 % unloaded rise is the default regulation
    secondary: { rmsVolts: Math.round((d.supply.volts + 2) / Math.SQRT2), ratedAmps: 0.05 },
    rectifier: { topology: 'bridge', diode: 'silicon' },
    mainsHertz: 50,
    reservoirFarads: 47e-6,
    stages: [{ droppingOhms: Math.max(100, d.supply.ohms), farads: d.supply.filterFarads, label: 'B+ filter' }],
    heaterWinding: { volts: 6.3, amps: 1 },
  };
}

function SupplyPanel({ design }: { design: Design }): ReactElement {
  const { dispatch } = useWorkspace();
  const analysis = useAnalysis();
  const hum = useAnalysis();
  const clip = useListenClip();
  const [report, setReport] = useState<SupplyReport | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [audio, setAudio] = useAudioUrl();
  const ps = design.powerSupply ?? null;
  const settled = useDebounced(design, 200);
  const { run } = analysis;
  useEffect(() => {
    const section = settled.powerSupply;
    if (!section) {
      setReport(null);
      return;
    }
    run({ type: 'supply', design: settled, section }).then(
      (r) => {
        if (r.type === 'supply') {
          setReport(r.report);
          setError(null);
        }
      },
      (e: Error) => {
        if (e.message !== 'cancelled') setError(e.message);
      },
    );
  }, [settled, run]);
  if (!ps) {
    return (
      <div>
        <p className="fine">
          This design has no transformer data: B+ is a fixed {v(design.supply.volts, 0)} behind {design.supply.ohms} Ω.
        </p>
        <button
          type="button"
          onClick={() =>
            dispatch({
              type: 'edit-design',
              design: { ...design, powerSupply: defaultSupplySection(design) },
              say: 'Added a supply section (transformer, bridge rectifier, reservoir, one RC stage, heater winding): edit it to match yours.',
            })
          }
        >
          Add a supply section
        </button>
      </div>
    );
  }
  const set = (next: PowerSupplySection) => {
    dispatch({ type: 'edit-design', design: { ...design, powerSupply: next } });
    return null;
  };
  const stages = ps.stages ?? [];
  return (
    <div className="supply">
      <div className="fields">
        <ValueField
          label="Secondary (RMS at rated current)"
          unit="volts"
          value={ps.secondary.rmsVolts}
          snap="off"
          testId="supply-secondary"
          onCommit={(x) => (x > 0 && x < 2000 ? set({ ...ps, secondary: { ...ps.secondary, rmsVolts: x } }) : 'between 0 and 2000 V RMS')}
        />
        <ValueField
          label="Secondary rated current"
          unit="amperes"
          value={ps.secondary.ratedAmps}
          snap="off"
          onCommit={(x) => (x > 0 && x < 100 ? set({ ...ps, secondary: { ...ps.secondary, ratedAmps: x } }) : 'between 0 and 100 A')}
        />
        <ValueField
          label="Reservoir capacitor"
          unit="farads"
          value={ps.reservoirFarads}
          snap="off"
          onCommit={(x) => (x > 0 && x < 1 ? set({ ...ps, reservoirFarads: x }) : 'between 0 and 1 F')}
        />
      </div>
      <div className="inline">
        <label className="inline-label">
          Rectifier
          <select value={ps.rectifier.topology} onChange={(e) => set({ ...ps, rectifier: { ...ps.rectifier, topology: e.target.value as RectifierTopology } })}>
            <option value="bridge">bridge</option>
            <option value="full-wave-ct">full wave, centre tap</option>
            <option value="half-wave">half wave</option>
          </select>
        </label>
        <label className="inline-label">
          Mains
          <select value={ps.mainsHertz} onChange={(e) => set({ ...ps, mainsHertz: Number(e.target.value) === 60 ? 60 : 50 })}>
            <option value={50}>50 Hz</option>
            <option value={60}>60 Hz</option>
          </select>
        </label>
      </div>
      {stages.map((s, i) => (
        <div className="inline stage" key={i}>
          <span className="fine">
            RC stage {i + 1}
            {i === stages.length - 1 ? " (the design's B+)" : ''}
          </span>
          <ValueField
            label="dropping resistor"
            unit="ohms"
            value={s.droppingOhms}
            snap="off"
            onCommit={(x) => (x > 0 ? set({ ...ps, stages: stages.map((t, j) => (j === i ? { ...t, droppingOhms: x } : t)) }) : 'must be positive')}
          />
          <ValueField
            label="capacitor"
            unit="farads"
            value={s.farads}
            snap="off"
            onCommit={(x) => (x > 0 && x < 1 ? set({ ...ps, stages: stages.map((t, j) => (j === i ? { ...t, farads: x } : t)) }) : 'between 0 and 1 F')}
          />
          <button type="button" onClick={() => set({ ...ps, stages: stages.filter((_, j) => j !== i) })}>
            Remove stage
          </button>
        </div>
      ))}
      <div className="inline">
        <button type="button" onClick={() => set({ ...ps, stages: [...stages, { droppingOhms: 10e3, farads: 22e-6 }] })}>
          Add RC stage
        </button>
        {ps.heaterWinding ? (
          <>
            <ValueField
              label="Heater winding"
              unit="volts"
              value={ps.heaterWinding.volts}
              snap="off"
              onCommit={(x) => (x > 0 && x < 100 ? set({ ...ps, heaterWinding: { ...ps.heaterWinding!, volts: x } }) : 'between 0 and 100 V')}
            />
            <ValueField
              label="Heater winding current"
              unit="amperes"
              value={ps.heaterWinding.amps}
              snap="off"
              onCommit={(x) => (x > 0 && x < 50 ? set({ ...ps, heaterWinding: { ...ps.heaterWinding!, amps: x } }) : 'between 0 and 50 A')}
            />
          </>
        ) : (
          <button type="button" onClick={() => set({ ...ps, heaterWinding: { volts: 6.3, amps: 1 } })}>
            Add heater winding
          </button>
        )}
      </div>
      {error && (
        <p className="warn" role="alert">
          {error}
        </p>
      )}
      {report && (
        <div className="supply-report" data-testid="supply-report">
          <p>
            B+ <strong data-testid="supply-loaded">{v(report.loadedVolts)}</strong> loaded at {(report.loadAmps * 1e3).toFixed(2)} mA, {v(report.unloadedVolts)}{' '}
            unloaded (what the capacitors see at switch-on). The model runs on this estimate: {v(report.modelSupply.volts)} behind{' '}
            {Math.round(report.modelSupply.ohms)} Ω.
          </p>
          <p>
            Ripple {report.ripplePeakToPeakVolts.toPrecision(3)} V p-p at {report.rippleHertz} Hz on the design's B+ (reservoir by I/(2fC):{' '}
            {report.formulaRippleVolts.toPrecision(3)} V).
          </p>
          {report.heater && (
            <p className={report.heater.pass ? '' : 'warn'}>
              Heaters {report.heater.totalAmps.toFixed(2)} A of {report.heater.windingAmps} A at {report.heater.windingVolts} V
              {report.heater.pass ? '' : ' — over the winding or a voltage mismatch'}.
            </p>
          )}
          {report.warnings.length > 0 && (
            <ul className="warnings">
              {report.warnings.map((w) => (
                <li key={w}>{w}</li>
              ))}
            </ul>
          )}
          <div className="inline">
            <button
              type="button"
              onClick={() =>
                dispatch({
                  type: 'edit-design',
                  design: withoutSupplySection(design),
                  say: 'Removed the supply section: B+ is a fixed voltage again (undo to bring the section back).',
                })
              }
            >
              Remove the supply section
            </button>
            <button
              type="button"
              disabled={hum.busy}
              onClick={() =>
                hum.run({ type: 'supply-hum', design, section: ps, clip }).then(setAudio, (e: Error) => {
                  if (e.message !== 'cancelled') setError(e.message);
                })
              }
            >
              {hum.busy ? 'Rendering the hum…' : clip ? 'Hear the hum (with the clip)' : 'Hear the hum'}
            </button>
          </div>
          <AudioResult result={audio} />
        </div>
      )}
    </div>
  );
}

/** The design without its power-supply section (B+ back to its fixed voltage). */
function withoutSupplySection(d: Design): Design {
  const { powerSupply: _gone, ...rest } = d;
  return rest;
}

function Histogram({ title, values, unit, digits = 1 }: { title: string; values: readonly number[]; unit: string; digits?: number }): ReactElement {
  const W = 240,
    H = 70,
    bins = 12;
  if (values.length === 0)
    return (
      <figure className="hist">
        <figcaption>{title}</figcaption>
        <p className="fine">no values</p>
      </figure>
    );
  const lo = Math.min(...values),
    hi = Math.max(...values);
  const span = hi - lo || Math.abs(hi) * 1e-3 || 1;
  const counts = new Array<number>(bins).fill(0);
  for (const x of values) counts[Math.min(bins - 1, Math.floor(((x - lo) / span) * bins))]!++;
  const max = Math.max(...counts);
  return (
    <figure className="hist">
      <figcaption>{title}</figcaption>
      <svg
        viewBox={`0 0 ${W} ${H + 16}`}
        width={W}
        height={H + 16}
        role="img"
        aria-label={`${title}: ${values.length} runs from ${lo.toFixed(digits)} to ${hi.toFixed(digits)} ${unit}`}
      >
        {counts.map((c, i) => (
          <rect key={i} x={(i * W) / bins + 1} y={H - (c / max) * H} width={W / bins - 2} height={(c / max) * H} className="bar" />
        ))}
        <text x={0} y={H + 14} className="axis">
          {lo.toFixed(digits)}
        </text>
        <text x={W} y={H + 14} textAnchor="end" className="axis">
          {hi.toFixed(digits)} {unit}
        </text>
      </svg>
    </figure>
  );
}

function SpreadPanel({ design }: { design: Design }): ReactElement {
  const analysis = useAnalysis();
  const listen = useAnalysis();
  const clip = useListenClip();
  const [runs, setRuns] = useState('50');
  const [seed, setSeed] = useState('1');
  const [summary, setSummary] = useState<{ for: Design; s: SpreadSummary } | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [audio, setAudio] = useAudioUrl();
  const start = () => {
    const n = Number(runs),
      s = Number(seed);
    if (!(Number.isInteger(n) && n >= 1 && n <= 2000)) {
      setError(`runs: a whole number from 1 to 2000 (got "${runs}")`);
      return;
    }
    if (!(Number.isInteger(s) && s >= 0 && s <= 0xffffffff)) {
      setError(`seed: a whole number from 0 to 4294967295 (got "${seed}")`);
      return;
    }
    setError(null);
    analysis.run({ type: 'spread', design, runs: n, seed: s }).then(
      (r) => {
        if (r.type === 'spread') setSummary({ for: design, s: r.summary });
      },
      (e: Error) => {
        if (e.message !== 'cancelled') setError(e.message);
      },
    );
  };
  const s = summary?.s ?? null;
  const tubes = design.parts.filter((p): p is Extract<Part, { kind: 'tube' }> => p.kind === 'tube');
  return (
    <div className="spread">
      <div className="inline">
        <label className="inline-label">
          Runs
          <input value={runs} size={5} onChange={(e) => setRuns(e.target.value)} data-testid="spread-runs" />
        </label>
        <label className="inline-label">
          Seed
          <input value={seed} size={8} onChange={(e) => setSeed(e.target.value)} data-testid="spread-seed" />
        </label>
        <button type="button" onClick={start} disabled={analysis.busy} data-testid="spread-run">
          Run the spread
        </button>
        {analysis.busy && (
          <>
            <progress max={1} value={analysis.fraction} aria-label="Spread progress" />
            <button type="button" onClick={analysis.cancel}>
              Cancel
            </button>
          </>
        )}
        <span className="fine">tube samples ×0.66…×1.33 and part tolerances, seeded (the same seed gives the same runs)</span>
      </div>
      {error && (
        <p className="warn" role="alert">
          {error}
        </p>
      )}
      {s && summary && (
        <div data-testid="spread-report">
          {summary.for !== design && <p className="fine warn">These results are for an earlier version of the design: run again.</p>}
          <p>
            {s.runs} runs, seed {s.seed}: <strong data-testid="spread-failed-count">{s.failedRuns.length}</strong> fail to bias or exceed a rating.
          </p>
          <div className="hists">
            {tubes.map((t) => (
              <Histogram
                key={`${t.id}-vgk`}
                title={`${t.id} bias (grid to cathode)`}
                unit="V"
                digits={2}
                values={s.results.flatMap((r) => (r.tubes[t.id] ? [r.tubes[t.id]!.vgk] : []))}
              />
            ))}
            {tubes.map((t) => (
              <Histogram
                key={`${t.id}-vpk`}
                title={`${t.id} plate voltage`}
                unit="V"
                digits={0}
                values={s.results.flatMap((r) => (r.tubes[t.id] ? [r.tubes[t.id]!.vpk] : []))}
              />
            ))}
            <Histogram title="gain at 1 kHz" unit="dB" values={s.results.flatMap((r) => (r.gainDb1k === null ? [] : [r.gainDb1k]))} />
            <Histogram
              title="output peak, 0.5 V in"
              unit="V"
              digits={2}
              values={s.results.flatMap((r) => (r.outputPeakVolts === null ? [] : [r.outputPeakVolts]))}
            />
          </div>
          {s.failedRuns.length > 0 && (
            <details open>
              <summary>Failing runs</summary>
              <ul className="failing" data-testid="failing-runs">
                {s.failedRuns.slice(0, 50).map((r) => (
                  <li key={r.run}>
                    run {r.run}: {r.failures.join('; ')}
                  </li>
                ))}
              </ul>
              {s.failedRuns.length > 50 && <p className="fine">and {s.failedRuns.length - 50} more</p>}
            </details>
          )}
          <StatsLine label="gain at 1 kHz" st={s.gainDb1k} unit="dB" />
          <div className="inline">
            <span className="fine">Hear the tube cases{clip ? '' : ' (load a clip first)'}:</span>
            {(['low', 'nominal', 'high'] as const).map((w) => (
              <button
                key={w}
                type="button"
                disabled={!clip || listen.busy}
                onClick={() => {
                  if (clip)
                    listen.run({ type: 'spread-listen', design, which: w, clip }).then(setAudio, (e: Error) => {
                      if (e.message !== 'cancelled') setError(e.message);
                    });
                }}
              >
                {w}
              </button>
            ))}
            {listen.busy && <span className="fine">rendering…</span>}
          </div>
          <AudioResult result={audio} />
        </div>
      )}
    </div>
  );
}

function StatsLine({ label, st, unit }: { label: string; st: Stats | null; unit: string }): ReactElement | null {
  if (!st) return null;
  return (
    <p className="fine">
      {label}: {st.min.toFixed(1)} … {st.median.toFixed(1)} … {st.max.toFixed(1)} {unit} (min, median, max)
    </p>
  );
}

function FilesPanel({ design }: { design: Design }): ReactElement {
  const analysis = useAnalysis();
  const [note, setNote] = useState<string | null>(null);
  const get = (type: 'parts' | 'spice') =>
    analysis.run({ type, design }).then(
      (r) => {
        if (r.type !== 'text') return;
        download(r.text, r.mime, r.fileName);
        setNote(`Downloaded ${r.fileName}.`);
      },
      (e: Error) => {
        if (e.message !== 'cancelled') setNote(`Could not make the file: ${e.message}`);
      },
    );
  return (
    <div className="files">
      <div className="inline">
        <button type="button" onClick={() => void get('parts')} disabled={analysis.busy} data-testid="parts-csv">
          Parts list (CSV)
        </button>
        <button type="button" onClick={() => void get('spice')} disabled={analysis.busy} data-testid="spice-export">
          SPICE netlist (.cir)
        </button>
      </div>
      <p className="fine">
        The parts list gives each part's value, tolerance and the rating to buy from the worst case (warm idle, cold start, maximum input). The SPICE netlist
        has the tubes as behavioural sources.
      </p>
      {note && (
        <p className="fine" role="status">
          {note}
        </p>
      )}
    </div>
  );
}

/** Voicing: pick the tone network's parts to vary and a corner or a drawn curve; fit from E12 / E24; apply as an edit. */
function VoicingPanel({ design }: { design: Design }): ReactElement {
  const { dispatch } = useWorkspace();
  const analysis = useAnalysis();
  const net = useMemo(() => {
    try {
      return identifyToneNetwork(designCircuit(design));
    } catch {
      return null;
    }
  }, [design]);
  const candidates = useMemo(() => design.parts.filter((p) => (p.kind === 'resistor' || p.kind === 'capacitor') && net?.partIds.includes(p.id)), [design, net]);
  const [vary, setVary] = useState<string[]>([]);
  const [mode, setMode] = useState<'corner' | 'curve'>('corner');
  const [hertz, setHertz] = useState(2000);
  const [response, setResponse] = useState<'low-pass' | 'high-pass'>('low-pass');
  const [series, setSeries] = useState<'E12' | 'E24'>('E12');
  const [curve, setCurve] = useState<number[]>(() => CURVE_HZ.map(() => 0));
  const [fit, setFit] = useState<VoicingReport | null>(null);
  const [error, setError] = useState<string | null>(null);
  if (!net) return <p className="fine">No passive tone network between a plate coupling capacitor and the output: nothing to voice.</p>;
  const chosen = vary.filter((id) => candidates.some((c) => c.id === id));
  const run = () => {
    if (chosen.length === 0) {
      setError('choose at least one part to vary');
      return;
    }
    setError(null);
    const target =
      mode === 'corner'
        ? { kind: 'corner' as const, hertz, response }
        : { kind: 'curve' as const, points: CURVE_HZ.map((h, i) => ({ hertz: h, db: curve[i]! })) };
    analysis.run({ type: 'voicing', design, vary: chosen, target, series }).then(
      (r) => {
        if (r.type === 'voicing') setFit(r.report);
      },
      (e: Error) => {
        if (e.message !== 'cancelled') setError(e.message);
      },
    );
  };
  const apply = () => {
    if (!fit) return;
    const parts = design.parts.map((p): Part => {
      const x = fit.values[p.id];
      if (x === undefined) return p;
      return p.kind === 'resistor' ? { ...p, ohms: x } : p.kind === 'capacitor' ? { ...p, farads: x } : p;
    });
    dispatch({ type: 'edit-design', design: { ...design, parts }, say: `Voiced ${Object.keys(fit.values).join(', ')} to ${series} values (undo to go back).` });
  };
  return (
    <div className="voicing">
      <p className="fine">
        Tone network: {net.partIds.join(', ')}, driven from node {net.drivenFrom}.
      </p>
      <fieldset className="inline" aria-label="Parts to vary">
        <legend>Vary</legend>
        {candidates.map((c) => (
          <label key={c.id} className="inline-label">
            <input
              type="checkbox"
              checked={chosen.includes(c.id)}
              onChange={(e) => setVary(e.target.checked ? [...chosen, c.id] : chosen.filter((x) => x !== c.id))}
            />
            {c.id}
          </label>
        ))}
      </fieldset>
      <div className="inline">
        <label className="inline-label">
          Target
          <select value={mode} onChange={(e) => setMode(e.target.value as 'corner' | 'curve')}>
            <option value="corner">a corner frequency</option>
            <option value="curve">a drawn curve</option>
          </select>
        </label>
        {mode === 'corner' && (
          <>
            <ValueField
              label="Corner"
              unit="hertz"
              value={hertz}
              snap="off"
              onCommit={(x) => {
                if (!(x >= 20 && x <= 20000)) return 'between 20 Hz and 20 kHz';
                setHertz(x);
                return null;
              }}
            />
            <select value={response} aria-label="Response" onChange={(e) => setResponse(e.target.value as 'low-pass' | 'high-pass')}>
              <option value="low-pass">low-pass (treble cut)</option>
              <option value="high-pass">high-pass (bass cut)</option>
            </select>
          </>
        )}
        <select value={series} aria-label="Series" onChange={(e) => setSeries(e.target.value as 'E12' | 'E24')}>
          <option value="E12">E12</option>
          <option value="E24">E24</option>
        </select>
        <button type="button" onClick={run} disabled={analysis.busy}>
          Fit
        </button>
      </div>
      {mode === 'curve' && <CurveEditor db={curve} onChange={setCurve} fit={fit} />}
      {error && (
        <p className="warn" role="alert">
          {error}
        </p>
      )}
      {fit && (
        <div>
          <p>
            {Object.entries(fit.values)
              .map(([id, x]) => {
                const p = design.parts.find((q) => q.id === id);
                return `${id} ${formatValue(x, p?.kind === 'capacitor' ? 'farads' : 'ohms', { style: p?.kind === 'capacitor' ? 'si' : 'rkm' })}${p?.kind === 'capacitor' ? 'F' : ''}`;
              })
              .join(', ')}{' '}
            <span data-testid="voicing-source">(driven through {(fit.sourceOhms / 1e3).toFixed(1)} k)</span> —{' '}
            {fit.fitErrorUnit === 'fraction'
              ? fit.cornerHz
                ? `corner ${fit.cornerHz.toFixed(0)} Hz (${(fit.fitError * 100).toFixed(1)} % off)`
                : 'no corner: the network never falls 3 dB from its peak with these values (a shelving network?); try other parts or a drawn curve'
              : `${fit.fitError.toFixed(2)} dB rms from the curve`}
          </p>
          <button type="button" onClick={apply} disabled={fit.fitErrorUnit === 'fraction' && !fit.cornerHz}>
            Apply the fit (undoable)
          </button>
        </div>
      )}
    </div>
  );
}

const CURVE_HZ = logFrequencies(50, 16000, 9);

/** Nine target points at log-spaced frequencies: click above or below a point to move it (±24 dB). */
function CurveEditor({ db, onChange, fit }: { db: readonly number[]; onChange: (db: number[]) => void; fit: VoicingReport | null }): ReactElement {
  const W = 360,
    H = 120,
    top = 6,
    range = 24;
  const x = (hz: number) => (Math.log(hz / 20) / Math.log(1000)) * W;
  const y = (d: number) => top + ((range - d) / (2 * range)) * (H - 2 * top);
  const fitLevel = fit ? Math.max(...fit.db) : 0;
  return (
    <svg
      className="curve-editor"
      viewBox={`0 0 ${W} ${H + 14}`}
      width={W}
      height={H + 14}
      role="img"
      aria-label="Target curve: click to set the level at each frequency"
      onClick={(e) => {
        const r = (e.currentTarget as SVGSVGElement).getBoundingClientRect();
        const px = ((e.clientX - r.left) / r.width) * W,
          py = ((e.clientY - r.top) / r.height) * (H + 14);
        let i = 0;
        for (let k = 1; k < CURVE_HZ.length; k++) if (Math.abs(x(CURVE_HZ[k]!) - px) < Math.abs(x(CURVE_HZ[i]!) - px)) i = k;
        const d = Math.round(Math.max(-range, Math.min(range, range - ((py - top) / (H - 2 * top)) * 2 * range)));
        onChange(db.map((v0, k) => (k === i ? d : v0)));
      }}
    >
      <line x1={0} y1={y(0)} x2={W} y2={y(0)} className="grid" />
      {fit && <polyline className="trace a" fill="none" points={fit.hertz.map((h, k) => `${x(h)},${y(fit.db[k]! - fitLevel)}`).join(' ')} />}
      <polyline className="trace target" fill="none" points={CURVE_HZ.map((h, k) => `${x(h)},${y(db[k]!)}`).join(' ')} />
      {CURVE_HZ.map((h, k) => (
        <circle key={h} cx={x(h)} cy={y(db[k]!)} r={4} className="handle" />
      ))}
      <text x={2} y={H + 12} className="axis">
        20 Hz
      </text>
      <text x={W - 2} y={H + 12} textAnchor="end" className="axis">
        20 kHz · ±{range} dB
      </text>
    </svg>
  );
}
