// Editor for the selected part: typed values (SI prefixes, RKM codes), E-series snapping,
// pot position and taper, tube type and sample, switch state; and the B+ voltage.
import { useEffect, useId, useState, type ReactElement } from 'react';
import { taperFraction, type Design, type Part, type PotPart, type Taper, type TubePart } from '../dsp/circuit/design.ts';
import { formatValue, parseValue, type ValueUnit } from '../dsp/parts/values.ts';
import { snapToSeries, type ESeries } from '../dsp/parts/eseries.ts';
import { TUBE_LIBRARY, TUBE_SAMPLES, tubeType } from '../dsp/tubes/library.ts';
import { fittedTubeNames } from '../dsp/circuit/edit.ts';
import type { PartsRow } from '../dsp/analysis/parts-list.ts';

export interface ValueFieldProps {
  readonly label: string;
  readonly unit: ValueUnit;
  readonly value: number;
  readonly snap: ESeries | 'off';
  readonly onCommit: (value: number) => string | null; // returns a reason when refused
  readonly testId?: string;
}

/** Text entry that commits on Enter or blur; an invalid entry stays, marked, with the reason. */
export function ValueField({ label, unit, value, snap, onCommit, testId }: ValueFieldProps): ReactElement {
  const id = useId();
  const [text, setText] = useState(() => formatValue(value, unit, { style: unit === 'ohms' ? 'rkm' : 'si' }));
  const [error, setError] = useState<string | null>(null);
  const [note, setNote] = useState<string | null>(null);
  useEffect(() => {
    setText(formatValue(value, unit, { style: unit === 'ohms' ? 'rkm' : 'si' }));
    setError(null);
  }, [value, unit]);
  const commit = () => {
    const r = parseValue(text, unit);
    if (!r.ok) {
      setError(r.reason);
      setNote(null);
      return;
    }
    let v = r.value;
    let n = r.note ?? null;
    if (snap !== 'off') {
      const s = snapToSeries(v, snap);
      if (Math.abs(s.errorFraction) > 1e-9)
        n = `snapped to ${snap} ${formatValue(s.value, unit, { style: unit === 'ohms' ? 'rkm' : 'si' })} (${(s.errorFraction * 100).toFixed(1)} %)`;
      v = s.value;
    }
    const refused = onCommit(v);
    if (refused) {
      setError(refused);
      return;
    }
    setError(null);
    setNote(n);
  };
  const unitSym = { ohms: 'Ω', farads: 'F', volts: 'V', amperes: 'A', watts: 'W', hertz: 'Hz' }[unit];
  return (
    <div className="field">
      <label htmlFor={id}>{label}</label>
      <div className="value-row">
        <input
          id={id}
          data-testid={testId}
          className={error ? 'invalid' : ''}
          aria-invalid={error !== null}
          aria-describedby={`${id}-msg`}
          value={text}
          spellCheck={false}
          autoComplete="off"
          onChange={(e) => setText(e.target.value)}
          onBlur={commit}
          onKeyDown={(e) => {
            if (e.key === 'Enter') commit();
            if (e.key === 'Escape') {
              setText(formatValue(value, unit));
              setError(null);
            }
          }}
        />
        <span className="unit">{unitSym}</span>
      </div>
      <div id={`${id}-msg`} className={error ? 'msg error' : 'msg'} role={error ? 'alert' : undefined}>
        {error ?? note ?? `now ${formatValue(value, unit, { digits: 4 })}${unitSym}`}
      </div>
    </div>
  );
}

function PotControls({ part, onChange }: { part: PotPart; onChange: (p: Part) => void }): ReactElement {
  const id = useId();
  const [style, setStyle] = useState<'knob' | 'slider'>('knob');
  const pos = part.position;
  const frac = taperFraction(part.taper, pos);
  const set = (position: number) => onChange({ ...part, position: Math.round(Math.min(1, Math.max(0, position)) * 1000) / 1000 });
  return (
    <div className="pot-controls">
      <div className="field">
        <label htmlFor={`${id}-pos`}>
          Rotation {(pos * 10).toFixed(1)} of 10 — track {Math.round(frac * 100)} % from end 1
        </label>
        {style === 'slider' ? (
          <input id={`${id}-pos`} type="range" min={0} max={1} step={0.005} value={pos} onChange={(e) => set(Number(e.target.value))} />
        ) : (
          <Knob id={`${id}-pos`} value={pos} onChange={set} label={`${part.id} rotation`} />
        )}
      </div>
      <div className="inline">
        <fieldset className="seg" aria-label="Control style">
          {(['knob', 'slider'] as const).map((s) => (
            <button key={s} type="button" aria-pressed={style === s} onClick={() => setStyle(s)}>
              {s}
            </button>
          ))}
        </fieldset>
        <label className="inline-label">
          Taper
          <select value={part.taper} onChange={(e) => onChange({ ...part, taper: e.target.value as Taper })}>
            <option value="linear">linear</option>
            <option value="log">log (audio)</option>
            <option value="reverse-log">reverse log</option>
          </select>
        </label>
      </div>
    </div>
  );
}

/** A rotary control: drag vertically, arrow keys, Home/End. 300 degrees of travel. */
export function Knob({ id, value, onChange, label }: { id: string; value: number; onChange: (v: number) => void; label: string }): ReactElement {
  const angle = -150 + value * 300;
  const onKey = (e: React.KeyboardEvent) => {
    const step = e.shiftKey ? 0.1 : 0.02;
    if (e.key === 'ArrowUp' || e.key === 'ArrowRight') {
      e.preventDefault();
      onChange(value + step);
    } else if (e.key === 'ArrowDown' || e.key === 'ArrowLeft') {
      e.preventDefault();
      onChange(value - step);
    } else if (e.key === 'Home') {
      e.preventDefault();
      onChange(0);
    } else if (e.key === 'End') {
      e.preventDefault();
      onChange(1);
    }
  };
  const onPointerDown = (e: React.PointerEvent) => {
    const y0 = e.clientY,
      v0 = value;
    const el = e.currentTarget as HTMLElement;
    el.setPointerCapture(e.pointerId);
    const move = (ev: PointerEvent) => onChange(v0 + (y0 - ev.clientY) / 200);
    const up = () => {
      el.removeEventListener('pointermove', move);
      el.removeEventListener('pointerup', up);
    };
    el.addEventListener('pointermove', move);
    el.addEventListener('pointerup', up);
  };
  return (
    <div
      id={id}
      className="knob"
      role="slider"
      tabIndex={0}
      aria-label={label}
      aria-valuemin={0}
      aria-valuemax={10}
      aria-valuenow={Math.round(value * 100) / 10}
      onKeyDown={onKey}
      onPointerDown={onPointerDown}
    >
      <svg viewBox="-30 -30 60 60" width="64" height="64" aria-hidden="true">
        <path d={arc(-150, 150, 24)} className="knob-track" />
        <path d={arc(-150, angle, 24)} className="knob-fill" />
        <circle r="17" className="knob-cap" />
        <line x1="0" y1="-5" x2="0" y2="-15" transform={`rotate(${angle})`} className="knob-mark" />
      </svg>
    </div>
  );
}

function arc(a0: number, a1: number, r: number): string {
  const p = (a: number) => [r * Math.sin((a * Math.PI) / 180), -r * Math.cos((a * Math.PI) / 180)] as const;
  const [x0, y0] = p(a0),
    [x1, y1] = p(a1);
  return `M ${x0} ${y0} A ${r} ${r} 0 ${a1 - a0 > 180 ? 1 : 0} 1 ${x1} ${y1}`;
}

const pf = (farads: number): string => `${Number((farads * 1e12).toPrecision(3))} pF`;

function TubeControls({ part, fitted, onChange }: { part: TubePart; fitted: readonly string[]; onChange: (p: Part) => void }): ReactElement {
  const t = tubeType(part.type);
  // the library, the design's fitted tubes and the part's own type (an imported user type shows too)
  const names = [...new Set([...Object.keys(TUBE_LIBRARY), ...fitted, part.type])];
  const sameKind = names.map((n) => tubeType(n)).filter((x) => x.kind === t.kind);
  const sampleName = Object.entries(TUBE_SAMPLES).find(([, v]) => Math.abs(v - part.sample) < 1e-9)?.[0] ?? 'custom';
  return (
    <div>
      <label className="inline-label">
        Type
        <select value={part.type} onChange={(e) => onChange({ ...part, type: e.target.value })}>
          {sameKind.map((x) => (
            <option key={x.name} value={x.name}>
              {x.name} — {x.description}
            </option>
          ))}
        </select>
      </label>
      <fieldset className="seg" aria-label="Tube sample">
        <legend>Sample</legend>
        {(Object.keys(TUBE_SAMPLES) as (keyof typeof TUBE_SAMPLES)[]).map((k) => (
          <button key={k} type="button" aria-pressed={sampleName === k} onClick={() => onChange({ ...part, sample: TUBE_SAMPLES[k] })}>
            {k} ×{TUBE_SAMPLES[k]}
          </button>
        ))}
      </fieldset>
      <label
        className="inline-label"
        title={`Data sheet: grid-plate ${pf(t.capacitance.gridPlateFarads)}, grid-cathode ${pf(t.capacitance.gridCathodeFarads)}, plate-cathode ${pf(t.capacitance.plateCathodeFarads)}`}
      >
        <input type="checkbox" checked={part.interelectrode !== false} onChange={(e) => onChange({ ...part, interelectrode: e.target.checked })} />
        Interelectrode capacitance (Miller roll-off): {pf(t.capacitance.gridPlateFarads)} grid-plate
      </label>
      <p className="fine">
        Only {t.kind}s are offered here: the socket wiring is the design's. Ratings: {t.ratings.source}. Capacitances: {t.capacitance.source}.
      </p>
    </div>
  );
}

export interface PartEditorProps {
  readonly design: Design;
  readonly part: Part | null;
  /** The part's row of the worst-case sheet (as `valvewright parts` prints it); null while it is worked out. */
  readonly rating: PartsRow | null;
  readonly sheetPending: boolean;
  readonly onChange: (part: Part) => string | null;
  readonly onSupplyVolts: (volts: number) => string | null;
}

export function PartEditor({ design, part, rating, sheetPending, onChange, onSupplyVolts }: PartEditorProps): ReactElement {
  const [snap, setSnap] = useState<ESeries | 'off'>('off');
  const snapId = useId();
  return (
    <section className="panel editor" aria-labelledby="editor-h">
      <h2 id="editor-h">
        {part ? (
          <>
            {part.id} <span className="sub">{part.label ?? part.kind}</span>
          </>
        ) : (
          'Part'
        )}
      </h2>
      {!part && <p className="fine">Choose a part in the schematic (click it, or Tab to it and press Enter).</p>}
      {part && (part.kind === 'resistor' || part.kind === 'capacitor' || part.kind === 'pot') && (
        <>
          <ValueField
            key={part.id}
            label={part.kind === 'capacitor' ? 'Capacitance' : part.kind === 'pot' ? 'Track resistance' : 'Resistance'}
            unit={part.kind === 'capacitor' ? 'farads' : 'ohms'}
            value={part.kind === 'capacitor' ? part.farads : part.ohms}
            snap={snap}
            testId="value-input"
            onCommit={(v) => onChange(part.kind === 'capacitor' ? { ...part, farads: v } : { ...part, ohms: v })}
          />
          <div className="inline">
            <label htmlFor={snapId}>Snap to</label>
            <select id={snapId} value={snap} onChange={(e) => setSnap(e.target.value as ESeries | 'off')}>
              <option value="off">no series</option>
              <option value="E12">E12 (±10 %)</option>
              <option value="E24">E24 (±5 %)</option>
            </select>
            {part.kind !== 'pot' && part.tolerance !== undefined && <span className="fine">part tolerance ±{Math.round(part.tolerance * 100)} %</span>}
          </div>
          <p className="fine">Type 470k, 4k7, 1M5, 0.1u, 2n2 or 100p. E-series per IEC 60063.</p>
        </>
      )}
      {part?.kind === 'pot' && (
        <PotControls
          part={part}
          onChange={(p) => {
            onChange(p);
          }}
        />
      )}
      {part?.kind === 'tube' && (
        <TubeControls
          part={part}
          fitted={fittedTubeNames(design)}
          onChange={(p) => {
            onChange(p);
          }}
        />
      )}
      {part?.kind === 'switch' && (
        <label className="inline-label">
          <input type="checkbox" checked={part.closed} onChange={(e) => onChange({ ...part, closed: e.target.checked })} /> closed
        </label>
      )}
      {part &&
        part.kind !== 'tube' &&
        part.kind !== 'switch' &&
        (rating ? (
          <p className="stress" data-testid="part-rating">
            Worst case: <span data-testid="part-worst">{rating.worstCase}</span> — buy <strong data-testid="part-buy">{rating.buy}</strong>{' '}
            <span className="fine">(warm idle, cold start at the unloaded B+, maximum input: the sheet `check` and `parts` print)</span>
          </p>
        ) : (
          <p className="stress fine">{sheetPending ? 'Working out the worst case…' : 'No worst-case figure for this part.'}</p>
        ))}
      {part?.kind === 'tube' && rating && (
        <p className="stress" data-testid="part-rating">
          Worst case: <span data-testid="part-worst">{rating.worstCase}</span>
        </p>
      )}
      <hr />
      {design.powerSupply ? (
        <p className="fine" data-testid="bplus-from-supply">
          B+ comes from the design's power-supply section (transformer, rectifier, filter): the operating point shows its estimate. Change that section to
          change it.
        </p>
      ) : (
        <ValueField
          key={`bplus-${design.supply.volts}`}
          label="B+ supply"
          unit="volts"
          value={design.supply.volts}
          snap="off"
          onCommit={onSupplyVolts}
          testId="bplus-input"
        />
      )}
    </section>
  );
}
