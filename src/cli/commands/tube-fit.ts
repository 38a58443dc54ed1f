// valvewright tube fit (--triode | --pentode) POINTS.csv [--json] [--out FILE] [--type NAME] [--like TYPE]
import { readFile, writeFile } from 'node:fs/promises';
import { fitGridLaw, fitPentode, fitTriode, FitError, type FitPoint } from '../../dsp/tubes/fit.ts';
import { IV_DEFAULT_GRID, TUBE_LIBRARY } from '../../dsp/tubes/library.ts';
import type { GridLaw } from '../../dsp/tubes/grid-laws.ts';
import { PLATE_MODEL_OF } from '../../dsp/tubes/registry.ts';
import { parsePointsCsv, TubeFileError, USER_TUBE_SCHEMA, type UserTubeFile } from '../../dsp/tubes/user-tube.ts';
import { CliError, optString, parseArgs } from '../args.ts';
import type { CommandIO } from '../main.ts';

export const TUBE_FIT_USAGE = [
  'usage: valvewright tube fit (--triode | --pentode) POINTS.csv [--json] [--out FILE] [--type NAME] [--like TYPE]',
  '  POINTS.csv: a header row naming Vpk, Vgk, Ip (and for pentodes Vsk, optionally Is), plus optionally Ig;',
  '  volts and amperes, or a unit in the header: "Ip(mA)", "Ip mA", "Ip [mA]". One point per row; an empty cell',
  '  means "not given". Rows with Ig fit the initial-velocity grid law (at least 4 such rows); without them the',
  "  library's default grid law is kept.",
  '  --out FILE writes a user tube file; name it in a design as "type": NAME and load it with',
  '  valvewright --tubes FILE COMMAND ... (ratings, heater and capacitances come from --like, default 12AX7 / EF86).',
].join('\n');

export async function runTubeFit(argv: readonly string[], io: CommandIO): Promise<number> {
  const a = parseArgs(argv, ['triode', 'pentode', 'json', 'help'], ['out', 'type', 'like']);
  if (a.options.has('help')) {
    io.out(TUBE_FIT_USAGE);
    return 0;
  }
  const triode = a.options.has('triode'),
    pentode = a.options.has('pentode');
  if (triode === pentode) throw new CliError(`give exactly one of --triode or --pentode\n${TUBE_FIT_USAGE}`);
  if (a.positional.length !== 1) throw new CliError(`give one POINTS.csv file\n${TUBE_FIT_USAGE}`);
  const path = a.positional[0]!;
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new CliError(`cannot read points file ${path} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  let points: FitPoint[];
  try {
    points = parsePointsCsv(text);
  } catch (e) {
    if (e instanceof TubeFileError) throw new CliError(`${path}: ${e.message}`);
    throw e;
  }
  const kind = triode ? 'triode' : 'pentode';
  const like = optString(a, 'like') ?? (triode ? '12AX7' : 'EF86');
  if (TUBE_LIBRARY[like]?.kind !== kind) throw new CliError(`--like must name a library ${kind} (got "${like}")`);
  let model: Record<string, number | string>,
    fittedIp: readonly number[],
    fittedIs: readonly (number | undefined)[],
    note = '';
  let gridCurrent: GridLaw = IV_DEFAULT_GRID,
    gridFitted = false;
  try {
    if (triode) {
      const f = fitTriode(points);
      model = { name: PLATE_MODEL_OF.triode, ...f.model };
      fittedIp = f.fittedIp;
      fittedIs = f.fittedIs;
    } else {
      const f = fitPentode(points);
      model = { name: PLATE_MODEL_OF.pentode, ...f.model };
      fittedIp = f.fittedIp;
      fittedIs = f.fittedIs;
      if (!f.kg2Fitted) note = 'no Is points: kg2 kept at the EF86 value; the screen current is not fitted';
    }
    if (points.some((q) => q.ig !== undefined)) {
      gridCurrent = fitGridLaw(points);
      gridFitted = true;
    }
  } catch (e) {
    if (e instanceof FitError) throw new CliError(`${path}: ${e.message}`);
    throw e;
  }
  const rows = points.flatMap((q, k) =>
    q.ip === undefined
      ? []
      : [{ vpk: q.vpk, vgk: q.vgk, ...(q.vsk !== undefined ? { vsk: q.vsk } : {}), ip: q.ip, fittedIp: fittedIp[k]!, relativeError: fittedIp[k]! / q.ip - 1 }],
  );
  const screen = points.flatMap((q, k) =>
    q.is === undefined ? [] : [{ vgk: q.vgk, vsk: q.vsk!, is: q.is, fittedIs: fittedIs[k]!, relativeError: fittedIs[k]! / q.is - 1 }],
  );
  const rms = Math.sqrt(rows.reduce((s, r) => s + r.relativeError ** 2, 0) / Math.max(1, rows.length));
  const type = optString(a, 'type') ?? `${path.replace(/^.*[\\/]/, '').replace(/\.[^.]*$/, '')}-fit`;
  const out = optString(a, 'out');
  if (out) {
    const file: UserTubeFile = {
      schema: USER_TUBE_SCHEMA,
      type,
      kind,
      model,
      gridCurrent,
      like,
      points,
      source: `valvewright tube fit --${kind} ${path.replace(/^.*[\\/]/, '')} (rms relative error ${(rms * 100).toFixed(3)} %)`,
    };
    try {
      await writeFile(out, JSON.stringify(file, null, 2) + '\n');
    } catch (e) {
      throw new CliError(`cannot write ${out} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
    }
  }
  if (a.options.has('json')) {
    io.out(
      JSON.stringify(
        {
          model,
          gridCurrent,
          points: rows,
          rmsRelativeError: rms,
          ...(screen.length ? { screenPoints: screen } : {}),
          gridCurrentFitted: gridFitted,
          ...(note ? { note } : {}),
        },
        null,
        2,
      ),
    );
    return 0;
  }
  io.out(`${kind} fit to ${rows.length} points of ${path}: rms relative error ${(rms * 100).toFixed(3)} %`);
  io.out(
    `  model ${Object.entries(model)
      .map(([k, v]) => `${k} ${typeof v === 'number' ? +v.toPrecision(6) : v}`)
      .join(', ')}`,
  );
  io.out(
    `  grid current ${gridFitted ? '(fitted)' : '(library default, no Ig points)'}: ${Object.entries(gridCurrent)
      .map(([k, v]) => `${k} ${typeof v === 'number' ? +v.toPrecision(6) : v}`)
      .join(', ')}`,
  );
  for (const r of rows)
    io.out(
      `  Vpk ${r.vpk} V, Vgk ${r.vgk} V${r.vsk !== undefined ? `, Vsk ${r.vsk} V` : ''}: Ip ${(r.ip * 1e3).toPrecision(4)} mA, fitted ${(r.fittedIp * 1e3).toPrecision(4)} mA (${(r.relativeError * 100).toFixed(2)} %)`,
    );
  for (const r of screen)
    io.out(
      `  screen at Vgk ${r.vgk} V, Vsk ${r.vsk} V: Is ${(r.is * 1e3).toPrecision(4)} mA, fitted ${(r.fittedIs * 1e3).toPrecision(4)} mA (${(r.relativeError * 100).toFixed(2)} %)`,
    );
  if (note) io.out(`  note: ${note}`);
  if (out) io.out(`wrote ${out} (type "${type}"; use it with: valvewright --tubes ${out} COMMAND ...)`);
  return 0;
}

/** valvewright tube SUBCOMMAND: only `fit` so far. */
export async function runTube(argv: readonly string[], io: CommandIO): Promise<number> {
  const [sub, ...rest] = argv;
  if (sub === 'fit') return runTubeFit(rest, io);
  if (sub === undefined || sub === '--help' || sub === '-h') {
    io.out(TUBE_FIT_USAGE);
    return sub ? 0 : 2;
  }
  throw new CliError(`unknown subcommand "tube ${sub}" (subcommands: fit)`);
}
