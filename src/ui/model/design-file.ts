// Export and import of one design as JSON. Import never returns a structurally broken design;
// wiring faults of a sheet still being built are left to the wiring check.
import { validateDesign, type Design } from '../../dsp/circuit/design.ts';

export function exportDesignText(design: Design): string {
  return `${JSON.stringify(design, null, 2)}\n`;
}

export type ImportResult = { readonly ok: true; readonly design: Design } | { readonly ok: false; readonly reason: string };

export const MAX_DESIGN_FILE_BYTES = 1_000_000;

export function importDesignText(text: string, fileName = 'file'): ImportResult {
  if (text.length > MAX_DESIGN_FILE_BYTES) return { ok: false, reason: `${fileName}: too large for a design (${text.length} characters)` };
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (err) {
    return { ok: false, reason: `${fileName} is not valid JSON (${(err as Error).message})` };
  }
  try {
    return { ok: true, design: validateDesign(doc, { wiring: false }) };
  } catch (err) {
    return { ok: false, reason: `${fileName}: ${(err as Error).message}` };
  }
}

/** A file name from the design name: "Hearthstone (pentode front)" -> "hearthstone-pentode-front.json". */
export function designFileName(design: Design): string {
  const base =
    design.name
      .toLowerCase()
      .replace(/[^a-z0-9]+/g, '-')
      .replace(/^-+|-+$/g, '') || 'design';
  return `${base}.json`;
}
