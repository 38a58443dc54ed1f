// Seeing the design: scope of node voltages, small-signal responses of A and B, output spectrum.
import { useMemo, type ReactElement } from 'react';
import type { Design } from '../../dsp/circuit/design.ts';
import { computeOperatingReport } from '../model/operating.ts';
import { designResponses, type Responses } from '../model/response.ts';
import { probeNodes } from '../model/probes.ts';
import { ResponsePlot, ScopePlot, SpectrumPlot } from '../Plots.tsx';
import { useDebounced } from '../store/hooks.ts';
import { useWorkspace } from '../store/context.ts';
import { modelDesign } from '../model/worst-case.ts';

export function SeePanel(): ReactElement {
  const { state, dispatch, port, status } = useWorkspace();
  const { active } = state;
  const slots = state.history.present;
  const design = slots[active];
  const respA = useDebounced(slots.A, 150),
    respB = useDebounced(slots.B, 150);
  const responses = useMemo(() => {
    const one = (d0: Design): Responses => {
      const d = modelDesign(d0);
      const r = computeOperatingReport(d);
      return designResponses(d, r.ok ? r.op : null);
    };
    const a = one(respA);
    return { A: a, B: respB === respA ? a : one(respB) };
  }, [respA, respB]);
  const probes = probeNodes(design);
  const chosen = state.scopeNodes ?? probes.slice(0, 3);
  const dur = status?.durationSeconds ?? 0;
  return (
    <section className="panel see" aria-labelledby="see-h">
      <h2 id="see-h">See</h2>
      <div className="scope-head">
        <span>Scope, slot {active}: node voltages over the clip</span>
        {probes.map((n) => (
          <label key={n} className="inline-label">
            <input
              type="checkbox"
              checked={chosen.includes(n)}
              onChange={(e) => dispatch({ type: 'scope-nodes', nodes: e.target.checked ? [...chosen, n] : chosen.filter((x) => x !== n) })}
            />
            {n}
          </label>
        ))}
      </div>
      <ScopePlot trace={() => port.scope(active)} position={() => port.positionSeconds()} duration={dur} chosen={chosen} />
      <div className="plots">
        <ResponsePlot
          title="Whole circuit, small signal at the operating point"
          series={[
            { name: 'A', curve: responses.A.whole, cls: 'a' },
            { name: 'B', curve: responses.B.whole, cls: 'b' },
          ]}
          note={responses.A.whole ? null : responses.A.reason}
        />
        <ResponsePlot
          title="Tone network as the circuit drives and loads it"
          series={[
            { name: 'A', curve: responses.A.tone, cls: 'a' },
            { name: 'B', curve: responses.B.tone, cls: 'b' },
            { name: 'A from an ideal source', curve: responses.A.toneIdeal, cls: 'ideal' },
          ]}
          note={responses.A.tone ? toneNote(responses.A) : responses.A.reason}
        />
        <SpectrumPlot read={(into) => port.spectrum(into)} />
      </div>
    </section>
  );
}

/** What the tone plot shows: parts, the source impedance and the control's corners at both ends. */
function toneNote(r: Responses): string {
  const e = r.toneEnds;
  const hz = (f: number | null) => (f === null ? 'none below 200 kHz' : f >= 1000 ? `${(f / 1000).toFixed(1)} kHz` : `${f.toFixed(0)} Hz`);
  return `parts ${r.toneParts.join(', ')}${r.toneSourceOhms !== null ? `; driven through ${(r.toneSourceOhms / 1e3).toFixed(0)} k` : ''}${e ? `; ${e.potId} corner ${hz(e.atPosition0Hz)} at 0, ${hz(e.atPosition1Hz)} at 10` : ''}`;
}
