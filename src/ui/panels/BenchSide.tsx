// Beside the schematic: the selected part's editor and wiring, and the operating point. The
// worst-case sheet (the one `check` and `parts` print) comes from a worker after a pause.
import { useEffect, useMemo, useState, type ReactElement } from 'react';
import type { Design, Part } from '../../dsp/circuit/design.ts';
import { checkWiring, type Finding } from '../../dsp/analysis/wiring-check.ts';
import { computeOperatingReport, type OperatingReport } from '../model/operating.ts';
import { modelDesign, SheetService, type WorstCaseView } from '../model/worst-case.ts';
import { editPart, editSupplyVolts, findPart } from '../model/workspace.ts';
import { PartEditor } from '../PartEditor.tsx';
import { OperatingPanel } from '../OperatingPanel.tsx';
import { TubeFitPanel } from '../TubeFitPanel.tsx';
import { useDebounced } from '../store/hooks.ts';
import { useWorkspace } from '../store/context.ts';
import { playableProblem } from '../store/workspace-store.ts';
import { WiringEditor } from './CircuitTools.tsx';

export interface Bench {
  readonly report: OperatingReport | null;
  readonly failure: string | null;
  /** Wiring and worst-case findings (not notes) of the design on screen. */
  readonly findings: readonly Finding[];
  readonly sheet: WorstCaseView | null;
}

/**
 * Operating point (shortly after edits) and worst-case sheet (after a pause, in a worker) of the
 * slot on screen, as the model runs it. A sheet that cannot play yet gets the wiring check alone.
 */
export function useBench(): Bench {
  const { state } = useWorkspace();
  const design = state.history.present[state.active];
  const opDesign = useDebounced(design, 40);
  const op = useMemo(() => {
    const r = computeOperatingReport(modelDesign(opDesign));
    return r.ok ? { report: r.report, failure: null } : { report: null, failure: `No operating point: ${r.reason}` };
  }, [opDesign]);
  const sheetDesign = useDebounced(design, 300);
  const [sheet, setSheet] = useState<{ design: Design; view: WorstCaseView } | null>(null);
  const sheets = useMemo(() => new SheetService((d, view) => setSheet(view ? { design: d, view } : null)), []);
  useEffect(() => () => sheets.dispose(), [sheets]);
  useEffect(() => {
    if (playableProblem(sheetDesign) === null) sheets.request(sheetDesign);
  }, [sheets, sheetDesign]);
  const sheetNow = sheet && sheet.design === design ? sheet.view : null;
  const draftFindings = useMemo(() => {
    if (playableProblem(opDesign) === null) return null;
    try {
      return checkWiring(opDesign).filter((f) => f.severity !== 'note');
    } catch {
      return [];
    }
  }, [opDesign]);
  const findings = draftFindings ?? (sheetNow ? sheetNow.result.findings.filter((f) => f.severity !== 'note') : []);
  useEffect(() => {
    const w = window as unknown as { __vwReadyMs?: number };
    if (op.report && w.__vwReadyMs === undefined) w.__vwReadyMs = performance.now();
  }, [op]);
  return { ...op, findings, sheet: sheetNow };
}

export function BenchSide({ bench }: { bench: Bench }): ReactElement {
  const { state, dispatch } = useWorkspace();
  const { active, selected } = state;
  const slots = state.history.present;
  const design = slots[active];
  const part = selected ? (findPart(design, selected) ?? null) : null;
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
  const supply = bench.sheet?.result.supply;
  return (
    <div className="side">
      <PartEditor
        design={design}
        part={part}
        rating={bench.sheet?.rows.find((r) => r.ref === selected) ?? null}
        sheetPending={!bench.sheet}
        onChange={onPart}
        onSupplyVolts={onSupply}
      />
      {part && (
        <section className="panel wiring-panel" aria-label={`Rewire ${part.id}`}>
          <h2>
            Wiring <span className="sub">{part.id}</span>
          </h2>
          <WiringEditor part={part} />
        </section>
      )}
      {/* the findings are listed under the schematic, where they point at the parts */}
      <OperatingPanel
        report={bench.report}
        failure={bench.failure}
        findings={[]}
        slot={active}
        supply={supply ? { loadedVolts: supply.loadedVolts, unloadedVolts: supply.unloadedVolts } : null}
      />
      <TubeFitPanel design={design} onDesign={(d) => dispatch({ type: 'edit-design', design: d })} />
    </div>
  );
}
