// Beside the schematic: the selected part's editor and the operating point with the wiring check.
import { useEffect, useMemo, type ReactElement } from 'react';
import type { Part } from '../../dsp/circuit/design.ts';
import { checkWiring, type Finding } from '../../dsp/analysis/wiring-check.ts';
import { computeOperatingReport, type OperatingReport } from '../model/operating.ts';
import { editPart, editSupplyVolts, findPart } from '../model/workspace.ts';
import { PartEditor } from '../PartEditor.tsx';
import { OperatingPanel } from '../OperatingPanel.tsx';
import { useDebounced } from '../store/hooks.ts';
import { useWorkspace } from '../store/context.ts';
import { WiringEditor } from './CircuitTools.tsx';

export interface OpState { readonly report: OperatingReport | null; readonly failure: string | null; readonly findings: readonly Finding[] }

/** Operating point and wiring findings of a design, recomputed shortly after edits. */
export function useOperatingPoint(): OpState {
  const { state } = useWorkspace();
  const opDesign = useDebounced(state.history.present[state.active], 40);
  const op = useMemo((): OpState => {
    let findings: Finding[] = [];
    const r = computeOperatingReport(opDesign);
    try { findings = checkWiring(opDesign, r.ok ? { warmNodes: r.op.nodes } : {}).filter((f) => f.severity !== 'note'); } catch { /* findings are advisory */ }
    if (!r.ok) return { report: null, failure: `No operating point: ${r.reason}`, findings };
    return { report: r.report, failure: null, findings };
  }, [opDesign]);
  useEffect(() => {
    const w = window as unknown as { __vwReadyMs?: number };
    if (op.report && w.__vwReadyMs === undefined) w.__vwReadyMs = performance.now();
  }, [op]);
  return op;
}

export function BenchSide({ op }: { op: OpState }): ReactElement {
  const { state, dispatch } = useWorkspace();
  const { active, selected } = state;
  const slots = state.history.present;
  const design = slots[active];
  const part = selected ? findPart(design, selected) ?? null : null;
  const onPart = (p: Part): string | null => {
    const r = editPart(slots, active, p);
    if (!r.ok) return r.reason;
    dispatch({ type: 'commit', slots: r.slots });
    return null;
  };
  const onSupply = (volts: number): string | null => {
    const r = editSupplyVolts(slots, active, volts);
    if (!r.ok) return r.reason;
    dispatch({ type: 'commit', slots: r.slots });
    return null;
  };
  return (
    <div className="side">
      <PartEditor design={design} part={part} stress={op.report?.parts.find((p) => p.id === selected)} onChange={onPart} onSupplyVolts={onSupply} />
      {part && (
        <section className="panel wiring-panel" aria-label={`Rewire ${part.id}`}>
          <h2>Wiring <span className="sub">{part.id}</span></h2>
          <WiringEditor part={part} />
        </section>
      )}
      {/* the wiring findings are shown under the schematic, where they point at the parts */}
      <OperatingPanel report={op.report} failure={op.failure} findings={[]} slot={active} />
    </div>
  );
}
