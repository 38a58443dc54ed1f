// Import a user tube file (valvewright tube fit --out), plot its fitted plate curves against its
// points, and put the type into the design (the design then carries the file). Self-contained: the
// workspace mounts it with the active slot's design and a callback that commits a new design.
import { useState, type ReactElement } from 'react';
import type { Design } from '../dsp/circuit/design.ts';
import './tube-fit.css';
import { fitPlot, readTubeFile, tubesOfKind, designWithTube, type FitPlot, type ImportedTube } from './model/tube-fit-plot.ts';

const W = 420,
  H = 220,
  L = 44,
  R = 8,
  T = 10,
  B = 24;
const COLOURS = 6; // series classes fit-0 .. fit-5 (styles.css)

function Plot({ plot, name }: { plot: FitPlot; name: string }): ReactElement {
  const x = (v: number) => L + (v / plot.maxVolts) * (W - L - R);
  const y = (a: number) => T + (1 - Math.min(1, a / plot.maxAmps)) * (H - T - B);
  const vStep = plot.maxVolts > 250 ? 100 : plot.maxVolts > 100 ? 50 : 20;
  const mA = plot.maxAmps * 1e3,
    aStep = mA > 20 ? 10 : mA > 5 ? 2 : mA > 2 ? 1 : 0.5;
  const vt: number[] = [],
    at: number[] = [];
  for (let v = 0; v <= plot.maxVolts; v += vStep) vt.push(v);
  for (let a = 0; a <= mA; a += aStep) at.push(a);
  return (
    <figure className="plot">
      <svg
        viewBox={`0 0 ${W} ${H}`}
        role="img"
        aria-label={`${name}: fitted plate current against plate voltage, with the file's points`}
        data-testid="tube-fit-plot"
      >
        {vt.map((v) => (
          <g key={`v${v}`}>
            <line x1={x(v)} x2={x(v)} y1={T} y2={H - B} className="grid" />
            <text x={x(v)} y={H - 8} textAnchor="middle" className="axis">
              {v}
            </text>
          </g>
        ))}
        {at.map((a) => (
          <g key={`a${a}`}>
            <line x1={L} x2={W - R} y1={y(a / 1e3)} y2={y(a / 1e3)} className="grid" />
            <text x={L - 4} y={y(a / 1e3) + 3} textAnchor="end" className="axis">
              {+a.toFixed(1)}
            </text>
          </g>
        ))}
        <text x={4} y={T + 4} className="axis">
          mA
        </text>
        <text x={W - R} y={H - B - 4} textAnchor="end" className="axis">
          Vpk (V)
        </text>
        {plot.series.map((s, i) => (
          <g key={s.label} className={`fit-${i % COLOURS}`}>
            <polyline className="trace fit-curve" fill="none" points={s.curve.map(([v, a]) => `${x(v).toFixed(1)},${y(a).toFixed(1)}`).join(' ')}>
              <title>{`fitted, ${s.label}`}</title>
            </polyline>
            {s.points.map((q) => (
              <circle key={q.vpk} className="fit-point" cx={x(q.vpk)} cy={y(q.ip)} r={3} data-testid="tube-fit-point">
                <title>{`${s.label}, Vpk ${q.vpk} V: ${(q.ip * 1e3).toPrecision(3)} mA, fitted ${(q.fittedIp * 1e3).toPrecision(3)} mA`}</title>
              </circle>
            ))}
          </g>
        ))}
      </svg>
    </figure>
  );
}

export function TubeFitPanel({ design, onDesign }: { design: Design; onDesign: (d: Design) => void }): ReactElement {
  const [imported, setImported] = useState<{ tube: ImportedTube; plot: FitPlot } | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [note, setNote] = useState<string | null>(null);
  const [target, setTarget] = useState('');
  const open = async (f: File) => {
    setNote(null);
    try {
      const tube = readTubeFile(await f.text(), f.name);
      setImported({ tube, plot: fitPlot(tube) });
      setError(null);
      setTarget(tubesOfKind(design, tube.type.kind)[0] ?? '');
    } catch (e) {
      setImported(null);
      setError((e as Error).message);
    }
  };
  const candidates = imported ? tubesOfKind(design, imported.tube.type.kind) : [];
  const use = () => {
    if (!imported || !target) return;
    try {
      onDesign(designWithTube(design, target, imported.tube));
      setNote(`${target} is now ${imported.tube.type.name}.`);
      setError(null);
    } catch (e) {
      setError((e as Error).message);
    }
  };
  return (
    <div className="tube-fit" data-testid="tube-fit-panel">
      <label className="inline-label">
        Import tube file{' '}
        <input
          type="file"
          accept=".json,application/json"
          aria-label="import tube file"
          onChange={(e) => {
            const f = e.target.files?.[0];
            if (f) void open(f);
            e.target.value = '';
          }}
        />
      </label>
      <span className="fine">
        {' '}
        (from <code>valvewright tube fit --out</code>)
      </span>
      {error && (
        <p className="bad" role="alert" data-testid="tube-fit-error">
          {error}
        </p>
      )}
      {imported && (
        <>
          <p data-testid="tube-fit-summary">
            {imported.tube.type.name} ({imported.tube.type.kind}, ratings and heater as {String(imported.tube.doc.like)}): {imported.tube.points.length} points,
            rms error {(imported.plot.rmsRelativeError * 100).toFixed(2)} %
          </p>
          <Plot plot={imported.plot} name={imported.tube.type.name} />
          <div className="legend">
            {imported.plot.series.map((s, i) => (
              <span key={s.label} className={`key fit-${i % COLOURS}`}>
                {s.label}
              </span>
            ))}
            <span className="fine"> lines: fitted; dots: the file's points</span>
          </div>
          {candidates.length > 0 ? (
            <div>
              <select aria-label="tube to replace" value={target} onChange={(e) => setTarget(e.target.value)}>
                {candidates.map((id) => (
                  <option key={id} value={id}>
                    {id}
                  </option>
                ))}
              </select>
              <button type="button" onClick={use}>
                Use in this design
              </button>
            </div>
          ) : (
            <p className="fine">This design has no {imported.tube.type.kind} to replace.</p>
          )}
          {note && (
            <p className="fine" data-testid="tube-fit-note">
              {note}
            </p>
          )}
        </>
      )}
    </div>
  );
}
