// Data-sheet points as CSV, and user tube files (valvewright.tube.v1): what `tube fit` writes and
// what designs name through `--tubes FILE`. Pure: text in, objects out.
import { parseGridLaw, type GridLaw } from './grid-laws.ts';
import { TUBE_LIBRARY, type TubeType } from './library.ts';
import { parsePlateModel } from './registry.ts';
import type { FitPoint } from './fit.ts';

export const USER_TUBE_SCHEMA = 'valvewright.tube.v1';

export class TubeFileError extends Error {
  override name = 'TubeFileError';
}

const UNIT_SCALE: Readonly<Record<string, number>> = { '': 1, v: 1, mv: 1e-3, kv: 1e3, a: 1, ma: 1e-3, ua: 1e-6, µa: 1e-6, μa: 1e-6, na: 1e-9 };
const COLUMNS = ['vpk', 'vgk', 'ip', 'vsk', 'is', 'ig'] as const;
type Column = (typeof COLUMNS)[number];
const IS_CURRENT: Readonly<Record<Column, boolean>> = { vpk: false, vgk: false, ip: true, vsk: false, is: true, ig: true };

/** One header cell: a column name with an optional unit: `Ip`, `Ip(mA)`, `Ip mA`, `Ip [mA]`, `Ip_mA`. */
function headerCell(cell: string): { column: Column; scale: number } {
  const m = /^\s*([A-Za-z]+)\s*(?:[([]\s*([^)\]]*?)\s*[)\]]|[\s_]+(\S+))?\s*$/.exec(cell);
  const name = m?.[1]?.toLowerCase();
  if (!m || !COLUMNS.includes(name as Column))
    throw new TubeFileError(`unknown column "${cell.trim()}" (columns: Vpk, Vgk, Ip, and optionally Vsk, Is, Ig; a unit may follow, e.g. "Ip(mA)")`);
  const column = name as Column;
  const unit = (m[2] ?? m[3] ?? '').toLowerCase();
  const scale = UNIT_SCALE[unit];
  if (scale === undefined) throw new TubeFileError(`column "${cell.trim()}": unknown unit "${unit}" (V, mV, kV, A, mA, uA, nA)`);
  if (unit !== '' && unit.endsWith('v') === IS_CURRENT[column])
    throw new TubeFileError(`column "${cell.trim()}": ${IS_CURRENT[column] ? 'a current needs A, mA, uA or nA' : 'a voltage needs V, mV or kV'}`);
  return { column, scale };
}

/** Parse data-sheet points: a header row, then one point per row (comma, semicolon or tab separated; `#` starts a comment). */
export function parsePointsCsv(text: string): FitPoint[] {
  const lines = text
    .split(/\r?\n/)
    .map((l, i) => ({ n: i + 1, l: l.replace(/#.*/, '').trim() }))
    .filter((x) => x.l !== '');
  if (lines.length === 0) throw new TubeFileError('points file is empty');
  const sep = (l: string) => l.split(/[,;\t]/);
  const header = sep(lines[0]!.l).map(headerCell);
  const seen = new Set<Column>();
  for (const h of header) {
    if (seen.has(h.column)) throw new TubeFileError(`column ${h.column} appears twice in the header`);
    seen.add(h.column);
  }
  for (const need of ['vpk', 'vgk'] as const) if (!seen.has(need)) throw new TubeFileError(`the header needs a ${need === 'vpk' ? 'Vpk' : 'Vgk'} column`);
  if (!seen.has('ip') && !seen.has('ig')) throw new TubeFileError('the header needs an Ip column (or Ig for grid-current points)');
  const points: FitPoint[] = [];
  for (const { n, l } of lines.slice(1)) {
    const cells = sep(l);
    if (cells.length !== header.length) throw new TubeFileError(`line ${n}: ${cells.length} values for ${header.length} columns`);
    const row: Partial<Record<Column, number>> = {};
    cells.forEach((c, k) => {
      const t = c.trim();
      if (t === '') return; // empty cell: not given on this row
      const x = Number(t);
      if (!Number.isFinite(x)) throw new TubeFileError(`line ${n}: "${t}" is not a number`);
      row[header[k]!.column] = x * header[k]!.scale;
    });
    if (row.vpk === undefined || row.vgk === undefined) throw new TubeFileError(`line ${n}: Vpk and Vgk are needed on every row`);
    if (row.ip === undefined && row.ig === undefined) throw new TubeFileError(`line ${n}: neither Ip nor Ig given`);
    points.push({
      vgk: row.vgk,
      vpk: row.vpk,
      ...(row.vsk !== undefined ? { vsk: row.vsk } : {}),
      ...(row.ip !== undefined ? { ip: row.ip } : {}),
      ...(row.is !== undefined ? { is: row.is } : {}),
      ...(row.ig !== undefined ? { ig: row.ig } : {}),
    });
  }
  if (points.length === 0) throw new TubeFileError('points file has a header but no points');
  return points;
}

export interface UserTubeFile {
  readonly schema: typeof USER_TUBE_SCHEMA;
  readonly type: string;
  readonly kind: 'triode' | 'pentode';
  readonly model: Record<string, number | string>;
  readonly gridCurrent: GridLaw;
  /** Heater, ratings, capacitances: copied from a library type until the user edits them. */
  readonly like: string;
  readonly points: readonly FitPoint[];
  readonly source: string;
}

type Json = Record<string, unknown>;
const isObj = (x: unknown): x is Json => typeof x === 'object' && x !== null && !Array.isArray(x);

/** A user tube file as a library type (ratings, heater and capacitances from its `like` type). */
export function userTubeType(doc: unknown, where: string): TubeType {
  const fail = (m: string): never => {
    throw new TubeFileError(`${where}: ${m}`);
  };
  if (!isObj(doc) || doc.schema !== USER_TUBE_SCHEMA) return fail(`"schema" must be "${USER_TUBE_SCHEMA}"`);
  if (typeof doc.type !== 'string' || !doc.type.trim()) return fail('"type" must name the tube');
  if (doc.kind !== 'triode' && doc.kind !== 'pentode') return fail('"kind" must be "triode" or "pentode"');
  const like = typeof doc.like === 'string' ? TUBE_LIBRARY[doc.like] : undefined;
  if (!like || like.kind !== doc.kind) return fail(`"like" must name a library ${doc.kind} (its heater, ratings and capacitances are used)`);
  if (!isObj(doc.model)) return fail('"model" must be an object');
  if (!isObj(doc.gridCurrent)) return fail('"gridCurrent" must be an object');
  const gridCurrent = parseGridLaw(doc.gridCurrent, `${where}: gridCurrent`, fail);
  const base = {
    name: doc.type,
    envelope: doc.type,
    description: `user tube fitted to data-sheet points (${where})`,
    capacitance: like.capacitance,
    gridCurrent,
    ratings: { ...like.ratings, source: `copied from ${like.name}: ${like.ratings.source}` },
    modelSource: typeof doc.source === 'string' ? doc.source : `user tube file ${where}`,
    gridSource: `user tube file ${where}`,
  };
  if (doc.kind === 'triode') {
    const { name: _n, ...model } = parsePlateModel('triode', doc.model, where, fail);
    return { ...base, kind: 'triode', model };
  }
  const { name: _n, ...model } = parsePlateModel('pentode', doc.model, where, fail);
  return { ...base, kind: 'pentode', model };
}
