// The workspace's tube-file import: read a user tube file (valvewright.tube.v1, written by
// `valvewright tube fit --out`), compute its fitted curves against its own points for a plot, and
// let a design use the type (the design then carries the file: Design.userTubes). Pure: no DOM.
import type { Design, Part } from '../../dsp/circuit/design.ts';
import { registerUserTube, type TubeType } from '../../dsp/tubes/library.ts';
import { newTubeCurrents, tubeCurrents, type TubeModelElement } from '../../dsp/tubes/registry.ts';
import { TubeFileError, userTubeType } from '../../dsp/tubes/user-tube.ts';
import type { FitPoint } from '../../dsp/tubes/fit.ts';

export interface ImportedTube {
  /** The file as read (what a design carries in userTubes). */
  readonly doc: Record<string, unknown>;
  readonly type: TubeType;
  /** Its points with plate current (the ones the plot shows). */
  readonly points: readonly (FitPoint & { readonly ip: number })[];
}

/** Parse a user tube file's text; a clear one-line error for anything wrong (never a stack trace). */
export function readTubeFile(text: string, fileName: string): ImportedTube {
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch {
    throw new TubeFileError(`${fileName}: not JSON (expected a user tube file written by valvewright tube fit --out)`);
  }
  const type = userTubeType(doc, fileName);
  const raw = (doc as { points?: unknown }).points;
  if (!Array.isArray(raw)) throw new TubeFileError(`${fileName}: "points" must be the list of fitted points`);
  const points: (FitPoint & { ip: number })[] = [];
  raw.forEach((q: unknown, i) => {
    const o = q as Record<string, unknown>;
    const num = (k: string) => (typeof o?.[k] === 'number' && Number.isFinite(o[k]) ? (o[k] as number) : undefined);
    const vgk = num('vgk'),
      vpk = num('vpk'),
      ip = num('ip'),
      vsk = num('vsk');
    if (vgk === undefined || vpk === undefined) throw new TubeFileError(`${fileName}: point ${i + 1} needs numbers "vgk" and "vpk"`);
    if (type.kind === 'pentode' && vsk === undefined && ip !== undefined) throw new TubeFileError(`${fileName}: point ${i + 1} of a pentode needs "vsk"`);
    if (ip !== undefined && ip > 0) points.push({ vgk, vpk, ip, ...(vsk !== undefined ? { vsk } : {}) });
  });
  if (points.length === 0) throw new TubeFileError(`${fileName}: no points with a plate current to plot`);
  return { doc: doc as Record<string, unknown>, type, points };
}

export interface CurveSeries {
  /** Vgk (and Vsk for a pentode) of this curve, volts. */
  readonly vgk: number;
  readonly vsk?: number;
  readonly label: string;
  /** Fitted plate current along Vpk: [vpk, amps] pairs. */
  readonly curve: readonly (readonly [number, number])[];
  /** The file's points on this curve: vpk, measured amps, fitted amps. */
  readonly points: readonly { readonly vpk: number; readonly ip: number; readonly fittedIp: number }[];
}

export interface FitPlot {
  readonly series: readonly CurveSeries[];
  readonly maxVolts: number;
  readonly maxAmps: number;
  /** RMS relative error of the fitted plate current over the points. */
  readonly rmsRelativeError: number;
}

function elementOf(t: TubeType): TubeModelElement {
  return t.kind === 'triode'
    ? { kind: 'triode', model: { name: 'koren-triode', ...t.model }, gridCurrent: t.gridCurrent }
    : { kind: 'pentode', model: { name: 'koren-pentode', ...t.model }, gridCurrent: t.gridCurrent };
}

/** The fitted plate-current curves, one per grid voltage (and screen voltage), against the file's points. */
export function fitPlot(imported: ImportedTube, samplesPerCurve = 64): FitPlot {
  const el = elementOf(imported.type),
    cur = newTubeCurrents();
  const ipAt = (vgk: number, vpk: number, vsk: number) => {
    tubeCurrents(el, vgk, vpk, vsk, cur);
    return cur.plate.amps;
  };
  const key = (q: FitPoint) => `${q.vgk.toFixed(3)}|${(q.vsk ?? 0).toFixed(1)}`;
  const groups = new Map<string, (FitPoint & { ip: number })[]>();
  for (const q of imported.points) {
    const k = key(q);
    const g = groups.get(k);
    if (g) g.push(q);
    else groups.set(k, [q]);
  }
  const maxVolts = 1.1 * Math.max(...imported.points.map((q) => q.vpk));
  let maxAmps = 0,
    sq = 0;
  const series: CurveSeries[] = [];
  for (const g of groups.values()) {
    const { vgk, vsk } = g[0]!;
    const curve: [number, number][] = [];
    for (let i = 0; i <= samplesPerCurve; i++) {
      const v = (maxVolts * i) / samplesPerCurve,
        a = ipAt(vgk, v, vsk ?? 0);
      curve.push([v, a]);
      maxAmps = Math.max(maxAmps, a);
    }
    const points = g
      .sort((a, b) => a.vpk - b.vpk)
      .map((q) => {
        const f = ipAt(q.vgk, q.vpk, q.vsk ?? 0);
        sq += (f / q.ip - 1) ** 2;
        maxAmps = Math.max(maxAmps, q.ip);
        return { vpk: q.vpk, ip: q.ip, fittedIp: f };
      });
    series.push({
      vgk,
      ...(vsk !== undefined ? { vsk } : {}),
      label: `Vgk ${+vgk.toFixed(2)} V${vsk !== undefined ? `, Vsk ${+vsk.toFixed(0)} V` : ''}`,
      curve,
      points,
    });
  }
  series.sort((a, b) => b.vgk - a.vgk || (b.vsk ?? 0) - (a.vsk ?? 0));
  return { series, maxVolts, maxAmps: maxAmps * 1.05, rmsRelativeError: Math.sqrt(sq / imported.points.length) };
}

/** The design's tube parts of the imported tube's kind (the ones it can replace). */
export function tubesOfKind(design: Design, kind: TubeType['kind']): string[] {
  return design.parts.filter((p) => p.kind === 'tube' && (kind === 'pentode') === (p.nodes.screen !== undefined)).map((p) => p.id);
}

/**
 * The design with part `partId` of the imported type, carrying the tube file in userTubes (one
 * file per type name: a newer import of the same name replaces the older). Registers the type here too.
 */
export function designWithTube(design: Design, partId: string, imported: ImportedTube): Design {
  const part = design.parts.find((p) => p.id === partId);
  if (!part || part.kind !== 'tube') throw new TubeFileError(`no tube part "${partId}" in the design`);
  if ((imported.type.kind === 'pentode') !== (part.nodes.screen !== undefined))
    throw new TubeFileError(`${partId} is a ${part.nodes.screen ? 'pentode' : 'triode'}; ${imported.type.name} is a ${imported.type.kind}`);
  registerUserTube(imported.type);
  const others = (design.userTubes ?? []).filter((u) => (u as { type?: unknown }).type !== imported.type.name);
  const parts: Part[] = design.parts.map((p) => (p.id === partId && p.kind === 'tube' ? { ...p, type: imported.type.name } : p));
  return { ...design, parts, userTubes: [...others, imported.doc] };
}
