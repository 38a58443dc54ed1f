// Seeing the design: scope of node voltages, small-signal responses of A and B, output spectrum.
import { useMemo, type ReactElement } from 'react';
import type { Design } from '../../dsp/circuit/design.ts';
import { computeOperatingReport } from '../model/operating.ts';
import { designResponses, type Responses } from '../model/response.ts';
import { probeNodes } from '../model/probes.ts';
import { ResponsePlot, ScopePlot, SpectrumPlot } from '../Plots.tsx';
import { useDebounced } from '../store/hooks.ts';
import { useWorkspace } from '../store/context.ts';

export function SeePanel(): ReactElement {
  const { state, dispatch, port, status } = useWorkspace();
  const { active } = state;
  const slots = state.history.present;
  const design = slots[active];
  const respA = useDebounced(slots.A, 150), respB = useDebounced(slots.B, 150);
  const responses = useMemo(() => {
    const one = (d: Design): Responses => { const r = computeOperatingReport(d); return designResponses(d, r.ok ? r.op : null); };
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
        {probes.map((n) => <label key={n} className="inline-label"><input type="checkbox" checked={chosen.includes(n)} onChange={(e) => dispatch({ type: 'scope-nodes', nodes: e.target.checked ? [...chosen, n] : chosen.filter((x) => x !== n) })} />{n}</label>)}
      </div>
      <ScopePlot trace={() => port.scope(active)} position={() => port.positionSeconds()} duration={dur} chosen={chosen} />
      <div className="plots">
        <ResponsePlot title="Whole circuit, small signal at the operating point" series={[{ name: 'A', curve: responses.A.whole, cls: 'a' }, { name: 'B', curve: responses.B.whole, cls: 'b' }]} note={responses.A.whole ? null : responses.A.reason} />
        <ResponsePlot title="Tone network" series={[{ name: 'A', curve: responses.A.tone, cls: 'a' }, { name: 'B', curve: responses.B.tone, cls: 'b' }]} note={responses.A.tone ? `parts: ${responses.A.toneParts.join(', ')}` : responses.A.reason} />
        <SpectrumPlot read={(into) => port.spectrum(into)} />
      </div>
    </section>
  );
}
