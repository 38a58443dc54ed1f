// Design loading for the checking commands: like args.loadDesign, but wiring faults are left
// for the wiring check to report instead of stopping the load.
import { readFile } from 'node:fs/promises';
import { DesignError, validateDesign, type Design } from '../dsp/circuit/design.ts';
import { TEMPLATES } from '../dsp/circuit/templates.ts';
import { CliError, optString, type ParsedArgs } from './args.ts';

export async function loadDesignForCheck(ref: string): Promise<Design> {
  const t = TEMPLATES[ref];
  if (t) return t;
  if (!ref.endsWith('.json') && !ref.includes('/') && !ref.includes('\\')) {
    throw new CliError(`unknown template "${ref}" (templates: ${Object.keys(TEMPLATES).join(', ')}; or give a design .json file)`);
  }
  let text: string;
  try { text = await readFile(ref, 'utf8'); } catch (e) { throw new CliError(`cannot read design ${ref} (${(e as NodeJS.ErrnoException).code ?? 'error'})`); }
  let doc: unknown;
  try { doc = JSON.parse(text); } catch (e) { throw new CliError(`design ${ref} is not valid JSON: ${(e as Error).message}`); }
  try { return validateDesign(doc, { wiring: false }); } catch (e) {
    if (e instanceof DesignError) throw new CliError(`invalid design ${ref}: ${e.message}`);
    throw e;
  }
}

export async function designArg(a: ParsedArgs, usage: string): Promise<Design> {
  const d = optString(a, 'design');
  if (!d) throw new CliError(`missing --design FILE|TEMPLATE (${usage})`);
  return loadDesignForCheck(d);
}
