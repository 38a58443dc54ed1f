// The circuit on screen: its schematic (parts are buttons), the live wiring check pointing at
// parts, whether the latest edit plays, and the tools that build the circuit.
import { useEffect, useMemo, useState, type ReactElement } from 'react';
import type { Finding } from '../../dsp/analysis/wiring-check.ts';
import { nudgePart } from '../../dsp/circuit/edit.ts';
import { differingParts } from '../model/workspace.ts';
import { Schematic } from '../Schematic.tsx';
import { playableProblem } from '../store/workspace-store.ts';
import { useWorkspace } from '../store/context.ts';
import { AddPartTool, NodeTool, StageTool } from './CircuitTools.tsx';

export function CircuitPanel({ findings }: { findings: readonly Finding[] }): ReactElement {
  const { state, dispatch } = useWorkspace();
  const { active, selected } = state;
  const slots = state.history.present;
  const design = slots[active];
  const changed = useMemo(() => new Set(differingParts(slots.A, slots.B)), [slots]);
  const faulty = useMemo(() => new Set(findings.flatMap((f) => f.parts)), [findings]);
  const problem = playableProblem(design);
  // the build tools open by themselves on a sheet with hardly anything on it
  const [buildOpen, setBuildOpen] = useState(design.parts.length < 3);
  const few = design.parts.length < 3;
  useEffect(() => {
    if (few) setBuildOpen(true);
  }, [few]);
  return (
    <section className="panel circuit" aria-labelledby="circuit-h">
      <h2 id="circuit-h">
        {design.name}{' '}
        <span className="sub">
          slot {active}
          {changed.size
            ? ` · ${changed.size} part${changed.size === 1 ? '' : 's'} differ${changed.size === 1 ? 's' : ''} from slot ${active === 'A' ? 'B' : 'A'}`
            : ''}
        </span>
      </h2>
      {problem && (
        <p className="not-playing" role="status" data-testid="not-playing">
          Not playing this sheet yet: {problem}. You hear the last version that could play.
        </p>
      )}
      <Schematic
        design={design}
        selectedId={selected}
        changedIds={changed}
        faultyIds={faulty}
        onSelect={(id) => dispatch({ type: 'select', id })}
        onNudge={(id, dx, dy) => {
          const r = nudgePart(design, id, dx, dy);
          if (r.ok) dispatch({ type: 'edit-design', design: r.design });
        }}
      />
      <WiringCheck findings={findings} />
      <details className="build" open={buildOpen} onToggle={(e) => setBuildOpen(e.currentTarget.open)}>
        <summary>Build: add parts, rename nodes, output</summary>
        <div className="tools">
          <AddPartTool />
          <StageTool />
          <NodeTool />
        </div>
      </details>
    </section>
  );
}

/** The wiring check's findings, each pointing at its parts (a click selects the part). */
function WiringCheck({ findings }: { findings: readonly Finding[] }): ReactElement | null {
  const { dispatch } = useWorkspace();
  if (findings.length === 0)
    return (
      <p className="fine wiring-ok" data-testid="wiring-check">
        Wiring check: no errors or warnings.
      </p>
    );
  return (
    <ul className="findings" aria-label="Wiring findings" data-testid="wiring-check">
      {findings.map((f) => (
        <li key={f.code + f.message} className={f.severity}>
          {f.severity}: {f.message}{' '}
          {[...new Set(f.parts)].map((p) => (
            <button key={p} type="button" className="link part-link" onClick={() => dispatch({ type: 'select', id: p })}>
              {p}
            </button>
          ))}
        </li>
      ))}
    </ul>
  );
}
