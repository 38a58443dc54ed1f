// Pure workspace logic: history, share links, design files, workspace edits, layout, meters.
import { describe, expect, it } from 'vitest';
import { DESIGN_SCHEMA, validateDesign, type Design, type Part } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { canRedo, canUndo, pushHistory, redo, startHistory, undo } from '../src/ui/model/history.ts';
import { decodeDesignHash, encodeDesignHash, fromBase64Url, toBase64Url } from '../src/ui/model/share.ts';
import { exportDesignText, importDesignText } from '../src/ui/model/design-file.ts';
import { applyTemplate, copySlot, differingParts, editPart, initialSlots } from '../src/ui/model/workspace.ts';
import { calibrationProblem, dbuToPeakVolts, parseDbu } from '../src/ui/model/calibration.ts';
import { dbfsFraction, formatVolts, inputAtFullScale, logFreqFraction, stepPeakHold, toDbfs, voltsFraction } from '../src/ui/model/meters.ts';
import { parseWorkspace, serializeWorkspace } from '../src/ui/model/storage.ts';
import { operatingReport } from '../src/ui/model/operating.ts';
import { sameStructure } from '../src/ui/audio-engine-port.ts';
import type { OperatingPoint } from '../src/dsp/circuit/engine.ts';

const base = TEMPLATES['pentode-triode']!;
const part = (d: Design, id: string) => d.parts.find((p) => p.id === id)!;

describe('history', () => {
  it('undoes and redoes every step in order and clears redo on a new edit', () => {
    let h = startHistory(1);
    h = pushHistory(h, 2);
    h = pushHistory(h, 3);
    expect(canUndo(h)).toBe(true);
    h = undo(h);
    expect(h.present).toBe(2);
    h = undo(h);
    expect(h.present).toBe(1);
    expect(canUndo(h)).toBe(false);
    h = redo(h);
    expect(h.present).toBe(2);
    h = pushHistory(h, 9);
    expect(canRedo(h)).toBe(false);
    expect(undo(h).present).toBe(2);
  });
  it('keeps at most the limit of past steps', () => {
    let h = startHistory(0);
    for (let i = 1; i <= 10; i++) h = pushHistory(h, i, 4);
    expect(h.past).toEqual([6, 7, 8, 9]);
  });
});

describe('share link', () => {
  it('base64url follows RFC 4648 section 5 (test vector "foobar" -> "Zm9vYmFy", "fo" -> "Zm8")', () => {
    const enc = (s: string) => toBase64Url(new TextEncoder().encode(s));
    expect(enc('foobar')).toBe('Zm9vYmFy'); // RFC 4648 section 10 vectors, padding dropped
    expect(enc('fo')).toBe('Zm8');
    expect(toBase64Url(new Uint8Array([0xfb, 0xff]))).toBe('-_8'); // '+/' become '-_' (section 5)
    expect([...fromBase64Url('-_8')]).toEqual([0xfb, 0xff]);
  });
  it('round-trips a design through the hash and refuses a damaged one with a reason', async () => {
    const d = { ...base, name: 'shared one' };
    const h = await encodeDesignHash(d);
    const r = await decodeDesignHash(`#${h}`);
    expect(r.ok).toBe(true);
    if (r.ok === true) expect(r.design).toEqual(d);
    const bad = await decodeDesignHash('#design=j.' + toBase64Url(new TextEncoder().encode('{"schema":"nope"}')));
    expect(bad.ok).toBe(false);
    if (bad.ok === false) expect(bad.reason).toMatch(/schema/);
    expect((await decodeDesignHash('#other')).ok).toBe('none');
  });
});

describe('design files', () => {
  it('export then import gives an identical design', () => {
    const r = importDesignText(exportDesignText(base));
    expect(r).toEqual({ ok: true, design: base });
  });
  it('a bad file gives one clear line', () => {
    const notJson = importDesignText('{oops', 'x.json');
    expect(notJson.ok).toBe(false);
    if (!notJson.ok) {
      expect(notJson.reason).toMatch(/^x\.json is not valid JSON/);
      expect(notJson.reason).not.toMatch(/\n/);
    }
    const broken = importDesignText(JSON.stringify({ ...base, parts: base.parts.map((p) => (p.id === 'R2' ? { ...p, ohms: -5 } : p)) }), 'y.json');
    expect(broken.ok).toBe(false);
    if (!broken.ok) expect(broken.reason).toMatch(/R2 ohms must be positive/);
  });
});

describe('workspace', () => {
  it('edits one slot and leaves the other alone; refuses a part that breaks the design', () => {
    const s = initialSlots();
    const r3 = part(s.A, 'R3') as Extract<Part, { kind: 'resistor' }>;
    const e = editPart(s, 'B', { ...r3, ohms: 220e3 });
    expect(e.ok).toBe(true);
    if (e.ok) {
      expect(part(e.slots.B, 'R3')).toMatchObject({ ohms: 220e3 });
      expect(e.slots.A).toBe(s.A);
      expect(differingParts(e.slots.A, e.slots.B)).toEqual(['R3']);
    }
    const r2 = part(s.A, 'R2') as Extract<Part, { kind: 'resistor' }>;
    expect(editPart(s, 'A', { ...r2, ohms: 0 }).ok).toBe(false);
    expect(copySlot({ A: s.A, B: base }, 'A').B).toBe(s.A);
  });
  it('switching template keeps the values of shared parts (same id and kind)', () => {
    const edited = {
      ...base,
      parts: base.parts.map((p) =>
        p.id === 'R2' && p.kind === 'resistor' ? { ...p, ohms: 10e6 } : p.id === 'V1' && p.kind === 'tube' ? { ...p, sample: 1.3 } : p,
      ),
    };
    const r = applyTemplate(edited, TEMPLATES['triode-triode']!);
    expect(part(r.design, 'R2')).toMatchObject({ ohms: 10e6 });
    // V1 is an EF86 pentode in one template and a 12AX7 triode in the other: type is not carried, sample is
    expect(part(r.design, 'V1')).toMatchObject({ type: '12AX7', sample: 1.3 });
    expect(part(r.design, 'R3')).toMatchObject({ ohms: 470e3 });
    expect(() => validateDesign(r.design)).not.toThrow();
  });
  it('autosave round-trips and a corrupted save is ignored', () => {
    const s = initialSlots();
    expect(parseWorkspace(serializeWorkspace({ slots: s, active: 'B' }))).toEqual({ slots: s, active: 'B' });
    expect(parseWorkspace('{"version":1,"A":{},"B":{}}')).toBeNull();
    expect(parseWorkspace(null)).toBeNull();
  });
  it('value-only edits keep the structure (sent as part updates), a type change does not', () => {
    const r3 = part(base, 'R3') as Extract<Part, { kind: 'resistor' }>;
    expect(sameStructure(base, { ...base, parts: base.parts.map((p) => (p.id === 'R3' ? { ...r3, ohms: 1e5 } : p)) })).toBe(true);
    expect(sameStructure(base, { ...base, parts: base.parts.map((p) => (p.id === 'V2' && p.kind === 'tube' ? { ...p, type: '12AT7' } : p)) })).toBe(false);
  });
});

describe("input calibration from an interface's maximum level in dBu", () => {
  it('converts by the dBu definition: 0 dBu = 0.7746 V rms (1 mW into 600 ohms), peak = sqrt(2) x rms', () => {
    // 0 dBu: sqrt(0.6) V rms = 0.774597 V, 1.095445 V peak; +4 dBu (the "professional line level",
    // tabulated as 1.228 V rms): 1.227653 V rms, 1.736164 V peak; +20 dBu: 7.74597 V rms (10x),
    // 10.954451 V peak
    expect(dbuToPeakVolts(0)).toBeCloseTo(1.095445, 6);
    expect(dbuToPeakVolts(4) / Math.SQRT2).toBeCloseTo(1.228, 3);
    expect(dbuToPeakVolts(4)).toBeCloseTo(1.736164, 6);
    expect(dbuToPeakVolts(20)).toBeCloseTo(10.954451, 6);
    expect(dbuToPeakVolts(-6.0206)).toBeCloseTo(1.095445 / 2, 5);
  });
  it('reads "+9", "9 dBu", "-2.5dBu"; refuses words and levels outside -20 … +30 dBu with a reason', () => {
    expect(parseDbu('+9')).toEqual({ ok: true, dbu: 9 });
    expect(parseDbu(' 9 dBu ')).toEqual({ ok: true, dbu: 9 });
    expect(parseDbu('-2.5dBu')).toEqual({ ok: true, dbu: -2.5 });
    for (const bad of ['loud', '', '9 dBV', '+', '45', '-30']) {
      const r = parseDbu(bad);
      expect(r.ok, bad).toBe(false);
      if (r.ok === false) expect(r.reason.length).toBeGreaterThan(10);
    }
  });
  it('refuses a calibration that is zero, negative, not finite or beyond 50 V', () => {
    expect(calibrationProblem(0.2)).toBeNull();
    expect(calibrationProblem(dbuToPeakVolts(15))).toBeNull();
    for (const bad of [0, -1, Number.NaN, Number.POSITIVE_INFINITY, 1e-4, 100]) expect(calibrationProblem(bad), String(bad)).toMatch(/between/);
  });
});

describe('meters', () => {
  it("marks a circuit-input peak at the source's full scale (-0.1 dBFS and up) for the calibration in use", () => {
    // -0.1 dBFS = 0.98855 of full scale (20 log10); at 0.5 V full scale the mark starts at 0.4943 V
    expect(inputAtFullScale(0.4943, 0.5)).toBe(true);
    expect(inputAtFullScale(0.494, 0.5)).toBe(false);
    expect(inputAtFullScale(0.6, 0.5)).toBe(true); // a float file above full scale
    expect(inputAtFullScale(0.25, 0.5)).toBe(false);
    expect(inputAtFullScale(Number.NaN, 0.5)).toBe(false);
    expect(inputAtFullScale(1, 0)).toBe(false);
  });

  it('dBFS: full scale is 0 dB, half amplitude is -6.02 dB (20 log10 0.5)', () => {
    expect(toDbfs(1)).toBe(0);
    expect(toDbfs(0.5)).toBeCloseTo(-6.0206, 3);
    expect(toDbfs(0)).toBe(-120);
    expect(dbfsFraction(-30)).toBeCloseTo(0.5, 9);
    expect(dbfsFraction(6)).toBe(1);
  });
  it('volts scale is logarithmic between its ends; formatting picks a prefix', () => {
    expect(voltsFraction(1e-3)).toBe(0);
    expect(voltsFraction(Math.sqrt(3e-3))).toBeCloseTo(0.5, 9); // geometric mean of 1 mV and 3 V
    expect(formatVolts(0.0123)).toBe('12.3 mV');
    expect(formatVolts(246.2)).toBe('246 V');
  });
  it('log frequency axis: 20 Hz at 0, 632 Hz (geometric mean) at 0.5, 20 kHz at 1', () => {
    expect(logFreqFraction(20)).toBe(0);
    expect(logFreqFraction(Math.sqrt(20 * 20000))).toBeCloseTo(0.5, 9);
    expect(logFreqFraction(20000)).toBe(1);
  });
  it('peak hold holds then falls', () => {
    let h = stepPeakHold({ db: -60, heldSeconds: 0 }, -10, 0.1);
    expect(h.db).toBe(-10);
    h = stepPeakHold(h, -60, 0.5);
    expect(h.db).toBe(-10);
    h = stepPeakHold(h, -60, 0.6);
    expect(h.db).toBeCloseTo(-22, 9); // 20 dB/s over 0.6 s
  });
});

describe('operating report', () => {
  it('flags a figure above its data-sheet rating', () => {
    // 12AX7 maximum plate dissipation 1.0 W, plate 300 V (RCA/Sylvania sheet, RCA/Sylvania 12AX7 and Philips EF86 data sheets, confirmed)
    const d = TEMPLATES['triode-triode']!;
    const op: OperatingPoint = {
      nodes: { '0': 0, bp: 300, b1: 290, p1: 150, g1: -0.5, k2: 100, p2: 200 },
      iterations: 1,
      supplySteps: 1,
      tubes: {
        V1: { kind: 'triode', plateAmps: 0.01, plateWatts: 1.5, gridAmps: 0, screenAmps: 0, screenWatts: 0, cathodeAmps: 0.01, vgk: -0.5, vpk: 150, vsk: 0 },
        V2: { kind: 'triode', plateAmps: 0.001, plateWatts: 0.1, gridAmps: 0, screenAmps: 0, screenWatts: 0, cathodeAmps: 0.001, vgk: -2, vpk: 100, vsk: 0 },
      },
    };
    const r = operatingReport(d, op);
    const v1 = r.tubes.find((t) => t.id === 'V1')!;
    expect(v1.figures.find((f) => f.label === 'plate dissipation')).toMatchObject({ limit: 1, exceeded: true });
    expect(r.warnings.some((w) => w.startsWith('V1 (12AX7): plate dissipation'))).toBe(true);
    expect(r.tubes.find((t) => t.id === 'V2')!.figures.every((f) => !f.exceeded)).toBe(true);
    expect(DESIGN_SCHEMA).toBe(d.schema);
  });
});

describe('undo history', () => {
  it('an edit that changes nothing adds no undo step; a real one does', async () => {
    const { pushHistory, startHistory, canUndo } = await import('../src/ui/model/history.ts');
    const h0 = startHistory({ a: 1, b: [1, 2] });
    const same = pushHistory(h0, { a: 1, b: [1, 2] }); // a new object with the same value
    expect(canUndo(same)).toBe(false);
    const changed = pushHistory(h0, { a: 2, b: [1, 2] });
    expect(canUndo(changed)).toBe(true);
  });
});
