// The header: the starting circuit (or an empty sheet) and the design-file toolbar.
import { useState, type ReactElement } from 'react';
import { TEMPLATES } from '../dsp/circuit/templates.ts';
import { emptySheet } from '../dsp/circuit/edit.ts';
import { canRedo, canUndo } from './model/history.ts';
import { applyTemplate, withSlot } from './model/workspace.ts';
import { designFileName, exportDesignText } from './model/design-file.ts';
import { encodeDesignHash } from './model/share.ts';
import { download, useFileActions } from './store/actions.ts';
import { useWorkspace } from './store/context.ts';

const EMPTY = '(empty)';

export function TopBar(): ReactElement {
  const { state, dispatch } = useWorkspace();
  const { openDesignFile } = useFileActions();
  const { history, active } = state;
  const [keepValues, setKeepValues] = useState(false);
  const slots = history.present;
  const design = slots[active];
  const templateKey = Object.entries(TEMPLATES).find(([, t]) => t.name === design.name)?.[0] ?? '';
  const choose = (key: string) => {
    if (key === EMPTY) {
      dispatch({
        type: 'commit',
        slots: withSlot(slots, active, emptySheet()),
        say: `Slot ${active} is an empty sheet: add parts from the circuit tools (Add part).`,
      });
      dispatch({ type: 'select', id: null });
      return;
    }
    const t = TEMPLATES[key];
    if (!t) return;
    if (keepValues) {
      const r = applyTemplate(design, t);
      dispatch({
        type: 'commit',
        slots: withSlot(slots, active, r.design),
        say: `Slot ${active} is now "${t.name}" with your values of ${r.kept.length} shared parts kept.`,
      });
    } else dispatch({ type: 'commit', slots: withSlot(slots, active, t), say: `Slot ${active} is now "${t.name}", exactly as the command line has it.` });
    dispatch({ type: 'select', id: null });
  };
  // the link goes to the clipboard, not the address bar: a reload must not bring back this
  // snapshot over later edits
  const share = async () => {
    const h = await encodeDesignHash(design);
    const url = `${location.origin}${location.pathname}${location.search}#${h}`;
    try {
      await navigator.clipboard.writeText(url);
      dispatch({ type: 'say', text: 'Link to this design copied to the clipboard.' });
    } catch {
      dispatch({ type: 'say', text: `Copy this link to share the design: ${url}` });
    }
  };
  return (
    <header className="top">
      <h1>
        Valvewright <span className="sub">audition bench</span>
      </h1>
      <label className="inline-label">
        <span className="label-text">Starting circuit</span>
        <select value={templateKey} data-testid="template-select" onChange={(e) => choose(e.target.value)}>
          {templateKey === '' && <option value="">{design.name}</option>}
          {Object.entries(TEMPLATES).map(([k, t]) => (
            <option key={k} value={k}>
              {t.name}
            </option>
          ))}
          <option value={EMPTY}>empty sheet</option>
        </select>
      </label>
      <label className="inline-label keep" title="When choosing a starting circuit, keep your values of the parts it shares with the present one">
        <input type="checkbox" checked={keepValues} onChange={(e) => setKeepValues(e.target.checked)} /> keep my values
      </label>
      <div className="toolbar" role="toolbar" aria-label="Design file">
        <button type="button" onClick={() => dispatch({ type: 'undo' })} disabled={!canUndo(history)} title="Ctrl+Z">
          Undo
        </button>
        <button type="button" onClick={() => dispatch({ type: 'redo' })} disabled={!canRedo(history)} title="Ctrl+Shift+Z">
          Redo
        </button>
        <button type="button" onClick={() => download(exportDesignText(design), 'application/json', designFileName(design))}>
          Export JSON
        </button>
        <label className="button" title="A design file, or a netlist-v1 file">
          Import JSON
          <input
            type="file"
            accept=".json,application/json"
            data-testid="import-design"
            className="visually-hidden"
            onChange={(e) => {
              const f = e.target.files?.[0];
              if (f) void openDesignFile(f);
              e.target.value = '';
            }}
          />
        </label>
        <button type="button" onClick={() => void share()}>
          Copy link
        </button>
        <button type="button" onClick={() => dispatch({ type: 'caution', kind: 'first-run' })}>
          Safety
        </button>
      </div>
    </header>
  );
}
