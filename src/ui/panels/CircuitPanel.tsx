// The circuit on screen: its schematic (parts are buttons) and how it differs from the other slot.
import { useMemo, type ReactElement } from 'react';
import { differingParts } from '../model/workspace.ts';
import { Schematic } from '../Schematic.tsx';
import { useWorkspace } from '../store/context.ts';

export function CircuitPanel(): ReactElement {
  const { state, dispatch } = useWorkspace();
  const { active, selected } = state;
  const slots = state.history.present;
  const design = slots[active];
  const changed = useMemo(() => new Set(differingParts(slots.A, slots.B)), [slots]);
  return (
    <section className="panel circuit" aria-labelledby="circuit-h">
      <h2 id="circuit-h">{design.name} <span className="sub">slot {active}{changed.size ? ` · ${changed.size} part${changed.size === 1 ? '' : 's'} differ${changed.size === 1 ? 's' : ''} from slot ${active === 'A' ? 'B' : 'A'}` : ''}</span></h2>
      <Schematic design={design} selectedId={selected} changedIds={changed} onSelect={(id) => dispatch({ type: 'select', id })} />
    </section>
  );
}
