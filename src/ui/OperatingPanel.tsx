// Operating point: node voltages, each tube beside its ratings, and warnings.
import type { ReactElement } from 'react';
import type { OperatingReport } from './model/operating.ts';
import type { Finding } from '../dsp/analysis/wiring-check.ts';

export function OperatingPanel({
  report,
  failure,
  findings,
  slot,
  supply,
}: {
  report: OperatingReport | null;
  failure: string | null;
  findings: readonly Finding[];
  slot: string;
  supply: { loadedVolts: number; unloadedVolts: number } | null;
}): ReactElement {
  return (
    <section className="panel op" aria-labelledby="op-h">
      <h2 id="op-h">
        Operating point <span className="sub">slot {slot}, at rest</span>
      </h2>
      {failure && (
        <p className="warn" role="alert">
          {failure}
        </p>
      )}
      {supply && (
        <p className="fine" data-testid="supply-bplus">
          B+ from the power-supply section: {supply.loadedVolts.toFixed(1)} V loaded, {supply.unloadedVolts.toFixed(1)} V unloaded (the cold start sees the
          unloaded figure)
        </p>
      )}
      {report && (
        <>
          {report.warnings.length > 0 && (
            <ul className="warnings" aria-label="Rating warnings">
              {report.warnings.map((w) => (
                <li key={w}>{w}</li>
              ))}
            </ul>
          )}
          {findings.length > 0 && (
            <ul className="findings" aria-label="Wiring and worst-case findings">
              {findings.map((f) => (
                <li key={f.code + f.message} className={f.severity}>
                  {f.severity}: {f.message}
                </li>
              ))}
            </ul>
          )}
          {report.tubes.map((t) => (
            <table key={t.id} className="tube-table">
              <caption>
                {t.id} · {t.type}
              </caption>
              <thead>
                <tr>
                  <th scope="col">quantity</th>
                  <th scope="col">at rest</th>
                  <th scope="col">max rating</th>
                </tr>
              </thead>
              <tbody>
                {t.figures.map((f) => (
                  <tr key={f.label} className={f.exceeded ? 'over' : ''}>
                    <th scope="row">{f.label}</th>
                    <td>
                      {f.value.toFixed(f.unit === 'W' ? 3 : f.unit === 'mA' ? 3 : 1)} {f.unit}
                    </td>
                    <td>
                      {f.limit === undefined ? '—' : `${f.limit} ${f.unit}`}
                      {f.limit !== undefined && <Bar frac={Math.abs(f.value) / f.limit} />}
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          ))}
          <table className="node-table">
            <caption>Node voltages to ground</caption>
            <tbody>
              {report.nodes.map((n) => (
                <tr key={n.node}>
                  <th scope="row">{n.node}</th>
                  <td>{n.volts.toFixed(n.volts > -10 && n.volts < 10 ? 3 : 1)} V</td>
                </tr>
              ))}
            </tbody>
          </table>
        </>
      )}
    </section>
  );
}

function Bar({ frac }: { frac: number }): ReactElement {
  return (
    <span className="rating-bar" aria-hidden="true">
      <span style={{ width: `${Math.min(100, frac * 100)}%` }} className={frac > 1 ? 'over' : frac > 0.8 ? 'near' : ''} />
    </span>
  );
}
