// `check`: wiring findings plus the worst-case ratings sheet, one list of findings. checkCircuit
// is the one worst-case sheet every view uses (check, parts, the part editor, the operating
// panel): for a design with a power-supply section the model's B+ is the estimate and the cold
// start sees the estimate's unloaded volts.
import { designCircuit, SUPPLY_ID, type Design } from '../circuit/design.ts';
import { CircuitEngine, type OperatingPoint } from '../circuit/engine.ts';
import { nextCapacitorVoltageRating } from '../parts/ratings.ts';
import { designSupply, type DesignSupply } from './design-supply.ts';
import { coldDcNodes } from './linear.ts';
import { ratingsSheet, type RatingsOptions, type RatingsSheet } from './ratings-sheet.ts';
import { checkWiring, type Finding } from './wiring-check.ts';

export interface CheckResult {
  readonly findings: readonly Finding[];
  readonly ratings: RatingsSheet;
}

const ORDER = { error: 0, warning: 1, note: 2 } as const;
const sortFindings = (f: readonly Finding[]) => [...f].sort((a, b) => ORDER[a.severity] - ORDER[b.severity]);

/** Wiring check and ratings sheet of a design as its model runs (B+ as given); findings sorted errors first. */
export function checkDesign(design: Design, options: RatingsOptions = {}): CheckResult {
  const circuit = designCircuit(design);
  let op: OperatingPoint | undefined = options.op;
  if (!op) {
    try {
      op = new CircuitEngine(circuit, options.sampleRateHz ?? 48000).operatingPoint();
    } catch {
      op = undefined;
    }
  }
  const cold = coldDcNodes(circuit, { [SUPPLY_ID]: options.unloadedSupplyVolts ?? design.supply.volts });
  const wiring = checkWiring(design, { ...(op ? { warmNodes: op.nodes } : {}), coldNodes: cold });
  const ratings = ratingsSheet(design, { ...options, ...(op ? { op } : {}) });
  return { findings: sortFindings([...wiring, ...ratings.findings]), ratings };
}

/** Primary side of the mains transformer: current drawn and the mains fuse to fit. */
export interface PrimaryEstimate {
  readonly mainsVolts: number;
  /** Secondary volt-amperes: HT winding(s) at the simulated RMS current plus the heater load. */
  readonly secondaryVoltAmps: number;
  readonly primaryAmps: number;
  /** Slow-blow (time-delay, "T") fuse rating to fit, amperes. */
  readonly fuseAmps: number;
}

/** Transformer efficiency of a small mains transformer (common practice, from memory: 80-90 %; 80 % taken). */
export const SMALL_TRANSFORMER_EFFICIENCY = 0.8;
/** Fuse rating over running primary current so the switch-on surge passes (common practice: about 2x, slow-blow). */
export const FUSE_HEADROOM = 2;
/** Miniature fuse ratings, amperes (the R10 series fuse makers list, common practice). */
export const FUSE_RATINGS_AMPS: readonly number[] = [
  0.05, 0.063, 0.08, 0.1, 0.125, 0.16, 0.2, 0.25, 0.315, 0.4, 0.5, 0.63, 0.8, 1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8, 10,
];

export function primaryEstimate(design: Design, supply: DesignSupply): PrimaryEstimate | null {
  const ps = design.powerSupply;
  if (!ps) return null;
  const mainsVolts = ps.mainsVolts ?? (ps.mainsHertz === 60 ? 120 : 230);
  const halves = ps.rectifier.topology === 'full-wave-ct' ? 2 : 1;
  const ht = halves * ps.secondary.rmsVolts * supply.estimate.windingRmsAmps;
  const h = supply.estimate.heater;
  const heaterVa = h ? h.windingVolts * Math.max(h.totalAmps, 0) : 0;
  const va = ht + heaterVa;
  const primaryAmps = va / (SMALL_TRANSFORMER_EFFICIENCY * mainsVolts);
  const want = FUSE_HEADROOM * primaryAmps;
  const fuseAmps = FUSE_RATINGS_AMPS.find((f) => f >= want) ?? FUSE_RATINGS_AMPS[FUSE_RATINGS_AMPS.length - 1]!;
  return { mainsVolts, secondaryVoltAmps: va, primaryAmps, fuseAmps };
}

/** Findings about the power-supply section: heater budget, every supply capacitor against the unloaded B+, the fuse. */
export function supplyFindings(design: Design, supply: DesignSupply): Finding[] {
  const ps = design.powerSupply;
  if (!ps) return [];
  const f: Finding[] = [];
  const e = supply.estimate;
  const r3 = (x: number) => +x.toPrecision(3);
  const h = e.heater;
  if (h) {
    if (!h.currentOk)
      f.push({
        severity: 'error',
        code: 'heater-budget',
        parts: design.parts.filter((p) => p.kind === 'tube').map((p) => p.id),
        nodes: [],
        message: `the heaters draw ${r3(h.totalAmps)} A from a ${h.windingVolts} V winding rated ${h.windingAmps} A (${Math.round(h.usedFraction * 100)} %): the winding overheats and its voltage sags; use a larger heater winding or fewer tubes`,
      });
    for (const m of h.voltageMismatches) f.push({ severity: 'error', code: 'heater-voltage', parts: [], nodes: [], message: `heater voltage: ${m}` });
  } else if (design.parts.some((p) => p.kind === 'tube')) {
    f.push({
      severity: 'note',
      code: 'heater-budget-unchecked',
      parts: [],
      nodes: [],
      message: 'the power-supply section gives no heaterWinding: the heater budget is not checked',
    });
  }
  const unloaded = supply.unloadedVolts;
  const caps = [
    { label: 'reservoir capacitor', rated: ps.reservoirRatedVolts },
    ...(ps.stages ?? []).map((s, i) => ({ label: `${s.label ?? `filter stage ${i + 1}`} capacitor`, rated: s.ratedVolts })),
  ];
  const buy = nextCapacitorVoltageRating(unloaded);
  const buyText = buy.ok ? `${buy.rating} V` : 'a higher rating (or two in series with balancing resistors)';
  for (const c of caps) {
    if (c.rated === undefined) {
      f.push({
        severity: 'note',
        code: 'supply-capacitor-unrated',
        parts: [],
        nodes: [],
        message: `${c.label}: no rating given; it sees the unloaded ${r3(unloaded)} V at switch-on: buy ${buyText}`,
      });
    } else if (unloaded > c.rated) {
      f.push({
        severity: 'error',
        code: 'supply-capacitor-voltage',
        parts: [],
        nodes: [],
        message: `${c.label} is rated ${c.rated} V but the unloaded B+ is ${r3(unloaded)} V (at switch-on, before the tubes draw current): it will fail, possibly violently; buy ${buyText}`,
      });
    } else if (unloaded > 0.8 * c.rated) {
      f.push({
        severity: 'warning',
        code: 'supply-capacitor-voltage',
        parts: [],
        nodes: [],
        message: `${c.label} rated ${c.rated} V runs at ${Math.round((100 * unloaded) / c.rated)} % of its rating with the unloaded ${r3(unloaded)} V (keep under 80 %): short life; buy ${buyText}`,
      });
    }
  }
  for (const w of e.warnings) {
    if (/heater|capacitor rated/.test(w)) continue; // reported above
    f.push({ severity: 'warning', code: 'supply', parts: [], nodes: [], message: w });
  }
  const p = primaryEstimate(design, supply);
  if (p)
    f.push({
      severity: 'note',
      code: 'mains-fuse',
      parts: [],
      nodes: [],
      message: `primary current about ${r3(p.primaryAmps * 1e3)} mA at ${p.mainsVolts} V (${r3(p.secondaryVoltAmps)} VA on the secondaries, ${SMALL_TRANSFORMER_EFFICIENCY * 100} % transformer efficiency): fit a ${p.fuseAmps >= 1 ? `${p.fuseAmps} A` : `${Math.round(p.fuseAmps * 1000)} mA`} slow-blow (T) mains fuse, about ${FUSE_HEADROOM}x the running current so the switch-on surge passes (common practice)`,
    });
  return f;
}

export interface WorstCase extends CheckResult {
  /** The design the model runs (the supply section's estimate as B+ where there is one). */
  readonly model: Design;
  readonly supply: DesignSupply | null;
  readonly primary: PrimaryEstimate | null;
}

/**
 * The one worst-case sheet of a design as given: the supply section (if any) estimated and made
 * the model's B+, the cold start at its unloaded volts, the supply's own findings added.
 */
export function checkCircuit(design: Design, options: RatingsOptions = {}): WorstCase {
  let supply: DesignSupply | null = null;
  const extra: Finding[] = [];
  if (design.powerSupply) {
    try {
      supply = designSupply(design);
    } catch (err) {
      extra.push({ severity: 'error', code: 'supply-estimate', parts: [], nodes: [], message: `power-supply section: ${(err as Error).message}` });
    }
  }
  const model = supply ? supply.design : design;
  const r = checkDesign(model, { ...options, ...(supply && options.unloadedSupplyVolts === undefined ? { unloadedSupplyVolts: supply.unloadedVolts } : {}) });
  if (supply) extra.push(...supplyFindings(design, supply));
  return { findings: sortFindings([...r.findings, ...extra]), ratings: r.ratings, model, supply, primary: supply ? primaryEstimate(design, supply) : null };
}
