// Autosave: the two slots and which one is heard, as JSON in browser storage.
import { validateDesign } from '../../dsp/circuit/design.ts';
import type { Slot } from '../../dsp/realtime/messages.ts';
import type { Slots } from './workspace.ts';

export const STORAGE_KEY = 'valvewright.workspace.v1';
export const CAUTION_KEY = 'valvewright.cautions-read.v1';

export interface Saved {
  readonly slots: Slots;
  readonly active: Slot;
}

export function serializeWorkspace(saved: Saved): string {
  return JSON.stringify({ version: 1, A: saved.slots.A, B: saved.slots.B, active: saved.active });
}

/** Parse a saved workspace; null when absent or not valid (a bad save never loads). */
export function parseWorkspace(text: string | null): Saved | null {
  if (!text) return null;
  try {
    const doc = JSON.parse(text) as { version?: unknown; A?: unknown; B?: unknown; active?: unknown };
    if (doc.version !== 1) return null;
    // a sheet still being built saves too: structure checked, wiring left to the wiring check
    const A = validateDesign(doc.A, { wiring: false }),
      B = validateDesign(doc.B, { wiring: false });
    return { slots: { A, B }, active: doc.active === 'B' ? 'B' : 'A' };
  } catch {
    return null;
  }
}
