// The workspace: two design slots and the edits on them. Pure reducers over readonly data.
import { validateDesign, withPart, type Design, type Part } from '../../dsp/circuit/design.ts';
import { TEMPLATES } from '../../dsp/circuit/templates.ts';
import { tubeType } from '../../dsp/tubes/library.ts';
import type { Slot } from '../../dsp/realtime/messages.ts';

export interface Slots {
  readonly A: Design;
  readonly B: Design;
}

export const DEFAULT_TEMPLATE = 'pentode-triode';

export function initialSlots(): Slots {
  const d = TEMPLATES[DEFAULT_TEMPLATE]!;
  return { A: d, B: d };
}

export function withSlot(s: Slots, slot: Slot, design: Design): Slots {
  return slot === 'A' ? { ...s, A: design } : { ...s, B: design };
}

/** Whole-design validation failure, or null. */
function wiringProblem(d: Design): string | null {
  try {
    validateDesign(d);
    return null;
  } catch (err) {
    return (err as Error).message;
  }
}

/**
 * Replace one part after checking the design still validates; returns a reason otherwise. A sheet
 * still being built (not yet playable) only needs to stay structurally sound; a value change never
 * turns a playable design into one that cannot play.
 */
export function editPart(s: Slots, slot: Slot, part: Part): { ok: true; slots: Slots } | { ok: false; reason: string } {
  const before = s[slot];
  try {
    const next = validateDesign(withPart(before, part), { wiring: false });
    if (wiringProblem(before) === null) {
      const bad = wiringProblem(next);
      if (bad) return { ok: false, reason: bad };
    }
    return { ok: true, slots: withSlot(s, slot, next) };
  } catch (err) {
    return { ok: false, reason: (err as Error).message };
  }
}

export function editSupplyVolts(s: Slots, slot: Slot, volts: number): { ok: true; slots: Slots } | { ok: false; reason: string } {
  const d = s[slot];
  try {
    const next = validateDesign({ ...d, supply: { ...d.supply, volts } }, { wiring: false });
    return { ok: true, slots: withSlot(s, slot, next) };
  } catch (err) {
    return { ok: false, reason: (err as Error).message };
  }
}

export function copySlot(s: Slots, from: Slot): Slots {
  return from === 'A' ? { A: s.A, B: s.A } : { A: s.B, B: s.B };
}

/**
 * A template with the values of parts shared with the current design (same id and kind) kept.
 * A tube keeps its sample; its type only when it is of the same kind (triode/pentode).
 */
export function applyTemplate(current: Design, template: Design): { design: Design; kept: string[] } {
  const kept: string[] = [];
  const parts = template.parts.map((t): Part => {
    const c = current.parts.find((p) => p.id === t.id && p.kind === t.kind);
    if (!c) return t;
    kept.push(t.id);
    switch (t.kind) {
      case 'resistor':
        return c.kind === 'resistor' ? { ...t, ohms: c.ohms } : t;
      case 'capacitor':
        return c.kind === 'capacitor' ? { ...t, farads: c.farads } : t;
      case 'pot':
        return c.kind === 'pot' ? { ...t, ohms: c.ohms, taper: c.taper, position: c.position } : t;
      case 'switch':
        return c.kind === 'switch' ? { ...t, closed: c.closed } : t;
      case 'tube': {
        if (c.kind !== 'tube') return t;
        const sameKind = tubeType(c.type).kind === tubeType(t.type).kind;
        return { ...t, sample: c.sample, type: sameKind ? c.type : t.type };
      }
    }
  });
  const design: Design = { ...template, parts };
  try {
    return { design: validateDesign(design), kept };
  } catch {
    return { design: template, kept: [] };
  }
}

export function findPart(d: Design, id: string): Part | undefined {
  return d.parts.find((p) => p.id === id);
}

/** Ids of parts whose values differ between two designs (parts only in one count too). */
export function differingParts(a: Design, b: Design): string[] {
  const ids = new Set([...a.parts.map((p) => p.id), ...b.parts.map((p) => p.id)]);
  return [...ids].filter((id) => JSON.stringify(findPart(a, id)) !== JSON.stringify(findPart(b, id)));
}
