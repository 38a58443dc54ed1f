// Slot plans: a design compiled off the audio thread into plain data (the engine circuit, the
// transient matrices, the DC operating point and the root's state, as typed arrays and records)
// that the audio thread only instantiates. Building a plan compiles the circuit and solves its
// DC point (milliseconds, up to 2560 supply steps); instantiating one copies arrays and builds
// the engine's object structure (no matrix compile, no DC solve).
//
// Plans cross threads by postMessage (structured clone; planTransferables lists the buffers
// that may be transferred instead of copied).
import { designCircuit, type Design } from './design.ts';
import type { EngineCircuit, OperatingPoint, PreparedEngineState } from './engine.ts';
import type { RootMatrices } from '../wdf/root-network.ts';
import type { TubeFunctions } from '../tubes/devices.ts';
import { exportTables, importTables, recordTables, type TableData } from '../tubes/tables.ts';
import { OversampledCircuit, isOversamplingFactor } from '../render/oversampled.ts';
import type { OversamplingFactor } from '../oversampling/oversampler.ts';

export const SLOT_PLAN_KIND = 'valvewright.slot-plan.v1';

/** A design compiled for one base rate and oversampling factor. */
export interface SlotPlan {
  readonly kind: typeof SLOT_PLAN_KIND;
  /** The design the plan was built from (with every edit applied). */
  readonly design: Design;
  readonly baseRateHz: number;
  readonly factor: OversamplingFactor;
  readonly tubeFunctions: TubeFunctions;
  readonly circuit: EngineCircuit;
  readonly engine: PreparedEngineState;
  /** Output node volts at the operating point. */
  readonly outputDcVolts: number;
  /** Probed nodes: the first stage's grid (or the output), then each tube's plate. */
  readonly probes: readonly string[];
  /** The tube-law tables the engine uses ('table' functions): built with the plan, not on the audio thread. */
  readonly tables: readonly TableData[];
}

export interface PlanOptions {
  /** Tube laws: 'table' for the live path (the default here), 'exact' for comparisons. */
  readonly tubeFunctions?: TubeFunctions;
}

/** Live path: tabulated tube laws (tubes/tables.ts; accuracy bound in tests/live-tables.test.ts). */
export const LIVE_TUBE_FUNCTIONS: TubeFunctions = 'table';

function probesOf(d: Design): string[] {
  const tubes = d.parts.filter((p) => p.kind === 'tube');
  const first = tubes[0];
  return [first && first.kind === 'tube' ? first.nodes.grid : d.output.node, ...tubes.map((t) => (t.kind === 'tube' ? t.nodes.plate : ''))];
}

/** Compile a design (off the audio thread): throws DesignError / OperatingPointError as the engine does. */
export function buildSlotPlan(design: Design, baseRateHz: number, factor: OversamplingFactor, options: PlanOptions = {}): SlotPlan {
  if (!isOversamplingFactor(factor)) throw new Error(`oversampling factor must be 1, 2, 4, 8, 16, 32, 64 or 128 (got ${String(factor)})`);
  const tubeFunctions = options.tubeFunctions ?? LIVE_TUBE_FUNCTIONS;
  const circuit = designCircuit(design);
  const { result: oc, keys } = recordTables(() => new OversampledCircuit(circuit, baseRateHz, factor, undefined, { tubeFunctions }));
  const engine = oc.engine.preparedState();
  return {
    kind: SLOT_PLAN_KIND,
    design,
    baseRateHz,
    factor,
    tubeFunctions,
    circuit,
    engine,
    outputDcVolts: engine.operatingPoint.nodes[oc.engine.outputNodeName] ?? 0,
    probes: probesOf(design),
    tables: exportTables(keys),
  };
}

/** Build the plan's circuit without compiling or solving (the audio thread's part). */
export function instantiateSlotPlan(plan: SlotPlan): OversampledCircuit {
  importTables(plan.tables);
  const oc = new OversampledCircuit(plan.circuit, plan.baseRateHz, plan.factor, undefined, { tubeFunctions: plan.tubeFunctions, prepared: plan.engine });
  oc.engine.setProbes(plan.probes);
  return oc;
}

/** The buffers of a plan's typed arrays (for a postMessage transfer list). */
export function planTransferables(plan: SlotPlan): ArrayBuffer[] {
  const m = plan.engine.matrices;
  const out: ArrayBuffer[] = [];
  for (const a of [m.E, m.F, m.Pu, m.Pi, m.Zu, m.Zi, plan.engine.rootVolts, ...plan.tables.map((t) => t.coefficients)])
    if (a.buffer instanceof ArrayBuffer) out.push(a.buffer);
  return out;
}

/** Every entry finite (a plain loop: on the audio thread, `every` with a callback took about 1 ms for a plan's tables). */
function allFinite(a: Float64Array): boolean {
  for (let k = 0; k < a.length; k++) if (a[k]! - a[k]! !== 0) return false;
  return true;
}

/**
 * The plan without the tables whose keys are in `sent` (a processor keeps every table it was
 * given), and `sent` updated: later plans for the same tube types carry no tables.
 */
export function withoutSentTables(plan: SlotPlan, sent: Set<string>): SlotPlan {
  const fresh = plan.tables.filter((t) => !sent.has(t.key));
  for (const t of fresh) sent.add(t.key);
  return fresh.length === plan.tables.length ? plan : { ...plan, tables: fresh };
}

const isRecord = (x: unknown): x is Record<string, unknown> => typeof x === 'object' && x !== null;

/**
 * Check that a received value has a plan's shape (a message from another thread is untrusted
 * data): sizes of every array against the matrix dimensions. Throws with a one-line reason.
 */
export function validateSlotPlan(x: unknown): SlotPlan {
  const bad = (why: string): never => {
    throw new Error(`not a slot plan: ${why}`);
  };
  if (!isRecord(x) || x.kind !== SLOT_PLAN_KIND) return bad(`"kind" must be "${SLOT_PLAN_KIND}"`);
  if (!isRecord(x.design) || !isRecord(x.circuit) || !Array.isArray(x.circuit.elements)) return bad('design and circuit required');
  if (typeof x.baseRateHz !== 'number' || !(x.baseRateHz > 0)) return bad('baseRateHz must be positive');
  if (typeof x.factor !== 'number' || !isOversamplingFactor(x.factor)) return bad('factor must be an oversampling factor');
  if (x.tubeFunctions !== 'exact' && x.tubeFunctions !== 'table') return bad('tubeFunctions must be "exact" or "table"');
  if (typeof x.outputDcVolts !== 'number' || !Number.isFinite(x.outputDcVolts)) return bad('outputDcVolts must be finite');
  if (!Array.isArray(x.probes) || !x.probes.every((p) => typeof p === 'string')) return bad('probes must be node names');
  const e = x.engine;
  if (!isRecord(e) || !isRecord(e.matrices) || !isRecord(e.operatingPoint) || !(e.rootVolts instanceof Float64Array)) return bad('engine state required');
  const m = e.matrices as Partial<RootMatrices>;
  const N = m.nodeCount,
    nu = m.nu,
    k = m.m;
  if (typeof N !== 'number' || typeof nu !== 'number' || typeof k !== 'number') return bad('matrix sizes required');
  const sized = (a: unknown, n: number): boolean => a instanceof Float64Array && a.length === n && allFinite(a);
  if (!sized(m.E, k * nu) || !sized(m.F, k * k) || !sized(m.Pu, nu * nu) || !sized(m.Pi, nu * k) || !sized(m.Zu, N * nu) || !sized(m.Zi, N * k))
    return bad('matrix arrays of the wrong size or not finite');
  if (!sized(e.rootVolts, k)) return bad('root state of the wrong size');
  if (!Array.isArray(x.tables)) return bad('tables must be an array');
  for (const t of x.tables as unknown[]) {
    if (!isRecord(t) || typeof t.key !== 'string' || typeof t.intervals !== 'number' || typeof t.x0 !== 'number' || typeof t.x1 !== 'number' || !(t.x1 > t.x0))
      return bad('a table without key, range or size');
    if (!sized(t.coefficients, 4 * t.intervals)) return bad(`table ${t.key}: coefficients of the wrong size or not finite`);
  }
  const op = e.operatingPoint as Partial<OperatingPoint>;
  if (!isRecord(op.nodes) || !isRecord(op.tubes)) return bad('operating point required');
  return x as unknown as SlotPlan;
}
