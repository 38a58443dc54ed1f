// Building the circuit: place a part between nodes, rename a node, choose the output node; and,
// for the selected part, move its leads, insert a part across or in series with it, delete it.
// Every edit is one undo step; a refused edit says why and changes nothing.
import { useId, useState, type ReactElement } from 'react';
import type { Design, Part } from '../../dsp/circuit/design.ts';
import {
  addPart,
  appendStage,
  designNodes,
  fittedTubeNames,
  replaceTubes,
  insertAcross,
  insertInSeries,
  makePart,
  moveLead,
  moveTerminalNode,
  removePart,
  renameNode,
  terminalsOf,
  type EditResult,
  type PartKind,
} from '../../dsp/circuit/edit.ts';
import { TUBE_LIBRARY, tubeType } from '../../dsp/tubes/library.ts';
import { userTubeType } from '../../dsp/tubes/user-tube.ts';
import { useWorkspace } from '../store/context.ts';

const KIND_NAMES: Record<PartKind, string> = { resistor: 'resistor', capacitor: 'capacitor', pot: 'pot', switch: 'switch', tube: 'tube' };

function terminalNames(kind: PartKind, tube: string): string[] {
  if (kind === 'tube') return tubeType(tube).kind === 'pentode' ? ['plate', 'grid', 'cathode', 'screen'] : ['plate', 'grid', 'cathode'];
  if (kind === 'pot') return ['end 1', 'wiper', 'end 2'];
  return ['lead 1', 'lead 2'];
}

/** Apply an edit to the slot on screen: one undo step, or the reason it was refused. */
function useEdit(): (r: EditResult, say?: string, select?: string | null) => string | null {
  const { dispatch } = useWorkspace();
  return (r, say, select) => {
    if (!r.ok) {
      dispatch({ type: 'say', text: `Not done: ${r.reason}`, bad: true });
      return r.reason;
    }
    dispatch({ type: 'edit-design', design: r.design, ...(say ? { say } : {}), ...(select !== undefined ? { select } : {}) });
    return null;
  };
}

function NodeInput({
  value,
  onChange,
  label,
  listId,
  testId,
}: {
  value: string;
  onChange: (v: string) => void;
  label: string;
  listId: string;
  testId?: string;
}): ReactElement {
  return (
    <label className="node-field">
      {label}
      <input
        value={value}
        list={listId}
        size={7}
        spellCheck={false}
        autoComplete="off"
        data-testid={testId}
        onChange={(e) => onChange(e.target.value.trim())}
      />
    </label>
  );
}

export function NodeList({ id, design }: { id: string; design: Design }): ReactElement {
  return (
    <datalist id={id}>
      {designNodes(design).map((n) => (
        <option key={n} value={n}>
          {n === '0' ? 'ground' : n === design.supply.node ? 'B+' : ''}
        </option>
      ))}
    </datalist>
  );
}

/** Place a new part between nodes (existing ones, or new names). */
export function AddPartTool(): ReactElement {
  const { state } = useWorkspace();
  const design = state.history.present[state.active];
  const edit = useEdit();
  const listId = useId();
  const [kind, setKind] = useState<PartKind>('resistor');
  const [tube, setTube] = useState('12AX7');
  const [nodes, setNodes] = useState<string[]>(['', '', '', '']);
  const names = terminalNames(kind, tube);
  const loadFitted = async (f: File) => {
    let doc: unknown;
    try {
      doc = JSON.parse(await f.text());
    } catch (err) {
      edit({ ok: false, reason: `${f.name} is not valid JSON (${(err as Error).message})` });
      return;
    }
    let name: string;
    try {
      name = userTubeType(doc, f.name).name;
    } catch (err) {
      edit({ ok: false, reason: (err as Error).message });
      return;
    }
    const tubes = [
      ...(design.userTubes ?? []).filter((u, i) => {
        try {
          return userTubeType(u, `userTubes[${i}]`).name !== name;
        } catch {
          return true;
        }
      }),
      doc,
    ];
    if (edit(replaceTubes(design, tubes), `Fitted tube ${name} (from ${f.name}) is now offered and saved with the design.`) === null) setTube(name);
  };
  const place = () => {
    const chosen = nodes.slice(0, names.length);
    if (chosen.some((n) => !n)) {
      edit({ ok: false, reason: `give every terminal a node (${names.join(', ')})` });
      return;
    }
    const p = makePart(design, { kind, nodes: chosen, tubeType: tube });
    if (typeof p === 'string') {
      edit({ ok: false, reason: p });
      return;
    }
    if (edit(addPart(design, p), `Placed ${p.id} (${KIND_NAMES[kind]}${kind === 'tube' ? ` ${tube}` : ''}) on ${chosen.join(', ')}.`, p.id) === null)
      setNodes(['', '', '', '']);
  };
  return (
    <fieldset className="tool" aria-label="Add part">
      <legend>Add part</legend>
      <NodeList id={listId} design={design} />
      <label className="inline-label">
        Kind
        <select value={kind} data-testid="add-kind" onChange={(e) => setKind(e.target.value as PartKind)}>
          {(Object.keys(KIND_NAMES) as PartKind[]).map((k) => (
            <option key={k} value={k}>
              {KIND_NAMES[k]}
            </option>
          ))}
        </select>
      </label>
      {kind === 'tube' && (
        <>
          <label className="inline-label">
            Type
            <select value={tube} data-testid="add-tube-type" onChange={(e) => setTube(e.target.value)}>
              {Object.values(TUBE_LIBRARY).map((t) => (
                <option key={t.name} value={t.name}>
                  {t.name} ({t.kind})
                </option>
              ))}
              {fittedTubeNames(design)
                .filter((n) => !TUBE_LIBRARY[n])
                .map((n) => (
                  <option key={`fit-${n}`} value={n}>
                    {n} (fitted {tubeType(n).kind})
                  </option>
                ))}
            </select>
          </label>
          <label className="button" title="A tube file written by valvewright tube fit (valvewright.tube.v1): it travels with the design">
            Fitted tube…
            <input
              type="file"
              accept=".json,application/json"
              className="visually-hidden"
              data-testid="add-fitted-tube"
              onChange={(e) => {
                const f = e.target.files?.[0];
                if (f) void loadFitted(f);
                e.target.value = '';
              }}
            />
          </label>
        </>
      )}
      {names.map((n, i) => (
        <NodeInput
          key={n}
          label={n}
          value={nodes[i] ?? ''}
          listId={listId}
          testId={`add-node-${i}`}
          onChange={(v) => setNodes(nodes.map((x, j) => (j === i ? v : x)))}
        />
      ))}
      <button type="button" onClick={place} data-testid="add-place">
        Place
      </button>
      <p className="fine">Nodes: pick one on the sheet (0 is ground, {design.supply.node} is B+) or type a new name.</p>
    </fieldset>
  );
}

/** Add a resistance-coupled triode stage after a node (the output by default); the output follows it. */
export function StageTool(): ReactElement {
  const { state } = useWorkspace();
  const design = state.history.present[state.active];
  const edit = useEdit();
  const [after, setAfter] = useState('');
  const [tube, setTube] = useState('12AX7');
  const from = after || design.output.node;
  const triodes = [...new Set([...Object.keys(TUBE_LIBRARY), ...fittedTubeNames(design)])].filter((n) => tubeType(n).kind === 'triode');
  return (
    <fieldset className="tool" aria-label="Add a stage">
      <legend>Add a stage</legend>
      <label className="inline-label">
        after node
        <select value={from} onChange={(e) => setAfter(e.target.value)} data-testid="stage-after">
          {designNodes(design)
            .filter((n) => n !== '0')
            .map((n) => (
              <option key={n} value={n}>
                {n}
                {n === design.output.node ? ' (output)' : ''}
              </option>
            ))}
        </select>
      </label>
      <label className="inline-label">
        tube
        <select value={tube} onChange={(e) => setTube(e.target.value)}>
          {triodes.map((n) => (
            <option key={n} value={n}>
              {n}
            </option>
          ))}
        </select>
      </label>
      <button
        type="button"
        data-testid="stage-add"
        onClick={() => {
          if (edit(appendStage(design, from, tube), `Added a ${tube} stage after node ${from}; the output follows it (undo to take it off).`) === null)
            setAfter('');
        }}
      >
        Add stage
      </button>
    </fieldset>
  );
}

/** Rename a node (onto an existing name joins the two), and move the output. */
export function NodeTool(): ReactElement {
  const { state } = useWorkspace();
  const design = state.history.present[state.active];
  const edit = useEdit();
  const listId = useId();
  const [from, setFrom] = useState('');
  const [to, setTo] = useState('');
  return (
    <fieldset className="tool" aria-label="Nodes">
      <legend>Nodes</legend>
      <NodeList id={listId} design={design} />
      <NodeInput label="rename" value={from} listId={listId} testId="rename-from" onChange={setFrom} />
      <NodeInput label="to" value={to} listId={listId} testId="rename-to" onChange={setTo} />
      <button
        type="button"
        onClick={() => {
          if (edit(renameNode(design, from, to), `Node ${from} is now ${to}.`) === null) {
            setFrom('');
            setTo('');
          }
        }}
      >
        Rename
      </button>
      <label className="inline-label">
        Output at
        <select
          value={design.output.node}
          data-testid="output-node"
          onChange={(e) => edit(moveTerminalNode(design, 'output', e.target.value), `The output is now node ${e.target.value}.`)}
        >
          {designNodes(design)
            .filter((n) => n !== '0')
            .map((n) => (
              <option key={n} value={n}>
                {n}
              </option>
            ))}
        </select>
      </label>
    </fieldset>
  );
}

/** The selected part's wiring: its leads, insert across or in series, delete. */
export function WiringEditor({ part }: { part: Part }): ReactElement {
  const { state } = useWorkspace();
  const design = state.history.present[state.active];
  const edit = useEdit();
  const listId = useId();
  const [insertKind, setInsertKind] = useState<'resistor' | 'capacitor' | 'switch'>('capacitor');
  const terms = terminalsOf(part);
  const [seriesAt, setSeriesAt] = useState(terms[0]!.terminal);
  const newPart = (): Part | null => {
    const p = makePart(design, { kind: insertKind, nodes: ['a', 'b'] });
    if (typeof p === 'string') {
      edit({ ok: false, reason: p });
      return null;
    }
    return p;
  };
  return (
    <div className="wiring" aria-label={`Wiring of ${part.id}`} role="group">
      <NodeList id={listId} design={design} />
      <div className="leads">
        {terms.map((t) => (
          <LeadField
            key={`${part.id}-${t.terminal}-${t.node}`}
            name={t.name}
            node={t.node}
            listId={listId}
            testId={`lead-${t.terminal}`}
            onMove={(node) => edit(moveLead(design, part.id, t.terminal, node), `${part.id} ${t.name} moved to node ${node}.`)}
          />
        ))}
      </div>
      <div className="inline">
        <label className="inline-label">
          Insert
          <select value={insertKind} onChange={(e) => setInsertKind(e.target.value as 'resistor' | 'capacitor' | 'switch')} data-testid="insert-kind">
            <option value="resistor">resistor</option>
            <option value="capacitor">capacitor</option>
            <option value="switch">switch</option>
          </select>
        </label>
        <button
          type="button"
          onClick={() => {
            const p = newPart();
            if (p) edit(insertAcross(design, part.id, p), `${p.id} placed across ${part.id}.`, p.id);
          }}
        >
          across
        </button>
        <button
          type="button"
          onClick={() => {
            const p = newPart();
            if (p) edit(insertInSeries(design, part.id, seriesAt, p), `${p.id} placed in series with ${part.id}.`, p.id);
          }}
        >
          in series with
        </button>
        <select value={seriesAt} aria-label="Terminal for the series part" onChange={(e) => setSeriesAt(e.target.value)}>
          {terms.map((t) => (
            <option key={t.terminal} value={t.terminal}>
              {t.name}
            </option>
          ))}
        </select>
      </div>
      <button type="button" className="danger-outline" data-testid="delete-part" onClick={() => edit(removePart(design, part.id), `Deleted ${part.id}.`, null)}>
        Delete {part.id}
      </button>
    </div>
  );
}

function LeadField({
  name,
  node,
  listId,
  testId,
  onMove,
}: {
  name: string;
  node: string;
  listId: string;
  testId: string;
  onMove: (node: string) => string | null;
}): ReactElement {
  const [text, setText] = useState(node);
  const commit = () => {
    if (text !== node && onMove(text) !== null) setText(node);
  };
  return (
    <label className="node-field">
      {name}
      <input
        value={text}
        list={listId}
        size={7}
        spellCheck={false}
        autoComplete="off"
        data-testid={testId}
        onChange={(e) => setText(e.target.value.trim())}
        onBlur={commit}
        onKeyDown={(e) => {
          if (e.key === 'Enter') commit();
          if (e.key === 'Escape') setText(node);
        }}
      />
    </label>
  );
}
