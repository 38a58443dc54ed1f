// Engines built off the audio thread (src/dsp/circuit/plan.ts) and the processor's use of them
// (src/dsp/realtime/dual-slot-engine.ts): process() instantiates plans, never compiles a circuit
// or solves a DC point; replies are matched to requests by id.
import { afterEach, describe, expect, it } from 'vitest';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { designCircuit, designToNetlist, withPart, type Design, type Part, type TubePart } from '../src/dsp/circuit/design.ts';
import { CircuitEngine } from '../src/dsp/circuit/engine.ts';
import { LinearNetworkCompiler } from '../src/dsp/wdf/root-network.ts';
import { buildSlotPlan, instantiateSlotPlan, validateSlotPlan, planTransferables } from '../src/dsp/circuit/plan.ts';
import { OversampledCircuit } from '../src/dsp/render/oversampled.ts';
import { DualSlotEngine, livePlanner, WARM_BASE_SAMPLES, type Planner } from '../src/dsp/realtime/dual-slot-engine.ts';
import type { FromProcessor, ToProcessor } from '../src/dsp/realtime/messages.ts';
import { Outbox, PendingReplies } from '../src/audio/requests.ts';
import { solveOperatingPoint } from './reference/mna-reference.ts';

const FS = 48000;
const PT = TEMPLATES['pentode-triode']!;
const TT = TEMPLATES['triode-triode']!;
const SP = TEMPLATES['single-pentode']!;
/**
 * Blocks of 128 within which a load is heard: one to instantiate the plan, the warm-up
 * (WARM_BASE_SAMPLES in chunks of at most 32 per block, fewer while the code is cold and a chunk
 * takes long: more blocks on a loaded machine), the 5 ms fade; with room to spare.
 */
const LOAD_BLOCKS = (8 * WARM_BASE_SAMPLES) / 32;

function tube(d: Design, id: string): TubePart {
  const p = d.parts.find((q) => q.id === id);
  if (!p || p.kind !== 'tube') throw new Error(`no tube ${id}`);
  return p;
}

describe('slot plans', () => {
  it('a plan that crossed a thread (structured clone) runs exactly like an engine compiled in place', () => {
    for (const d of [PT, TT, SP]) {
      for (const tubeFunctions of ['exact', 'table'] as const) {
        const plan = structuredClone(buildSlotPlan(d, FS, 4, { tubeFunctions }));
        const fromPlan = instantiateSlotPlan(validateSlotPlan(plan));
        const direct = new OversampledCircuit(designCircuit(d), FS, 4, undefined, { tubeFunctions });
        for (let k = 0; k < 2000; k++) {
          const x = 0.8 * Math.sin((2 * Math.PI * 440 * k) / FS);
          expect(fromPlan.processSample(x)).toBe(direct.processSample(x));
        }
      }
    }
  });

  it('carries the DC operating point of the independent nodal solver (exact laws, within 0.1 %)', () => {
    // tests/reference/mna-reference.ts: written from the netlist spec only (full-Newton MNA)
    for (const d of [PT, TT, SP]) {
      const plan = buildSlotPlan(d, FS, 4, { tubeFunctions: 'exact' });
      const ref = solveOperatingPoint(designToNetlist(d));
      for (const [node, v] of Object.entries(ref.nodes)) {
        const got = plan.engine.operatingPoint.nodes[node];
        expect(got, node).toBeDefined();
        expect(Math.abs(got! - v)).toBeLessThanOrEqual(1e-3 * Math.max(1, Math.abs(v)));
      }
    }
  });

  it('refuses malformed plans with a one-line reason', () => {
    const plan = buildSlotPlan(TT, FS, 2);
    expect(() => validateSlotPlan({ ...plan, kind: 'x' })).toThrow(/not a slot plan: "kind"/);
    const m = plan.engine.matrices;
    const short = { ...plan, engine: { ...plan.engine, matrices: { ...m, F: m.F.subarray(1) } } };
    expect(() => validateSlotPlan(short)).toThrow(/wrong size/);
    const nan = m.E.slice();
    nan[0] = Number.NaN;
    expect(() => validateSlotPlan({ ...plan, engine: { ...plan.engine, matrices: { ...m, E: nan } } })).toThrow(/not finite/);
    expect(planTransferables(plan).length).toBe(7 + plan.tables.length);
    expect(plan.tables.length).toBeGreaterThan(0);
  });
});

describe('the processor only instantiates plans', () => {
  const restore: (() => void)[] = [];
  afterEach(() => {
    for (const r of restore.splice(0)) r();
  });

  /** Count calls of a prototype method made while `inside(this)` is true. */
  function countInside<T extends object>(proto: T, name: keyof T & string, inside: (self: object) => boolean): { n: number } {
    const c = { n: 0 };
    const orig = proto[name] as unknown as (...a: unknown[]) => unknown;
    (proto as Record<string, unknown>)[name] = function (this: object, ...a: unknown[]) {
      if (inside(this)) c.n++;
      return orig.apply(this, a);
    };
    restore.push(() => {
      (proto as Record<string, unknown>)[name] = orig;
    });
    return c;
  }

  it('design loads, tube changes, quality changes and resets: no DC solve, no matrix compile, no plan built inside process()', () => {
    let inProcess = false;
    // a DC solve is an operatingPoint() call with no cached point (the engine's private `op`)
    const dcSolves = countInside(CircuitEngine.prototype, 'operatingPoint', (self) => inProcess && Reflect.get(self, 'op') === null);
    const compiles = countInside(LinearNetworkCompiler.prototype, 'compile', () => inProcess);
    let plansInProcess = 0,
      plansOutside = 0;
    const planner: Planner = (d, fs, f) => {
      if (inProcess) plansInProcess++;
      else plansOutside++;
      return livePlanner(d, fs, f);
    };
    const posted: FromProcessor[] = [];
    const e = new DualSlotEngine({ sampleRateHz: FS, planner, meterHz: 0, post: (m) => posted.push(m) });
    const out = new Float32Array(128),
      inp = new Float32Array(128);
    const run = (blocks: number) => {
      for (let b = 0; b < blocks; b++) {
        for (let k = 0; k < 128; k++) inp[k] = 0.3 * Math.sin(k * 0.05 + b);
        inProcess = true;
        e.process(inp, out, 128);
        inProcess = false;
      }
    };
    const session: ToProcessor[] = [
      { type: 'load-design', slot: 'A', design: PT, requestId: 1 },
      { type: 'load-design', slot: 'B', design: TT, requestId: 2 },
      { type: 'set-part', slot: 'A', part: { ...tube(PT, 'V2'), type: '12AT7' }, requestId: 3 },
      { type: 'set-part', slot: 'B', part: { ...tube(TT, 'V2'), type: '12AU7' }, requestId: 4 },
      { type: 'set-quality', factor: 2, requestId: 5 },
      { type: 'monitor', target: 'B' },
      { type: 'load-design', slot: 'B', design: SP, requestId: 6 },
      { type: 'set-quality', factor: 4, requestId: 7 },
      { type: 'reset', requestId: 8 },
    ];
    for (const m of session) {
      e.handle(m);
      run(LOAD_BLOCKS / 2);
    }
    run(20);
    expect(posted.filter((m) => m.type === 'error')).toEqual([]);
    expect(posted.filter((m) => m.type === 'loaded').length).toBeGreaterThanOrEqual(6);
    expect(plansOutside).toBeGreaterThanOrEqual(6);
    expect(plansInProcess).toBe(0);
    expect(dcSolves.n).toBe(0);
    expect(compiles.n).toBe(0);
    expect(e.factor).toBe(4);
    expect(e.design('B')?.name).toBe(SP.name);
  });

  it('a plan from another thread is used as sent; a plan for another rate or factor is refused', () => {
    const posted: FromProcessor[] = [];
    let built = 0;
    const e = new DualSlotEngine({
      sampleRateHz: FS,
      meterHz: 0,
      post: (m) => posted.push(m),
      planner: (d, fs, f) => {
        built++;
        return livePlanner(d, fs, f);
      },
    });
    const plan = structuredClone(buildSlotPlan(TT, FS, 4));
    e.handle({ type: 'load-design', slot: 'A', design: TT, plan, requestId: 11 });
    e.handle({ type: 'load-design', slot: 'B', design: TT, plan: buildSlotPlan(TT, 44100, 4), requestId: 12 });
    e.handle({ type: 'load-design', slot: 'B', design: TT, plan: buildSlotPlan(TT, FS, 2), requestId: 13 });
    for (let b = 0; b < LOAD_BLOCKS; b++) e.process(new Float32Array(128), new Float32Array(128), 128);
    expect(built).toBe(0);
    const errs = posted.flatMap((m) => (m.type === 'error' ? [m] : []));
    expect(errs.map((m) => m.requestId)).toEqual([12, 13]);
    expect(errs[0]!.message).toMatch(/plan is for 44100 Hz at 4x, the processor runs 48000 Hz at 4x/);
    expect(posted.filter((m) => m.type === 'loaded').map((m) => (m.type === 'loaded' ? m.requestId : -1))).toEqual([11]);
  });

  it('edits made while a load is pending are applied to the instantiated plan', () => {
    // reference: the same design compiled directly with the edit (the engine's own DC solve)
    const e = new DualSlotEngine({ sampleRateHz: FS, meterHz: 0, smoothingSeconds: 0, componentSmoothingSeconds: 0 });
    e.handle({ type: 'load-design', slot: 'A', design: TT });
    const r = TT.parts.find((p) => p.kind === 'resistor')!;
    const edit: Part = { ...r, ohms: (r.kind === 'resistor' ? r.ohms : 1) * 1.5 } as Part;
    e.handle({ type: 'set-part', slot: 'A', part: edit });
    expect(e.design('A')).toEqual(withPart(TT, edit));
  });
});

describe('request ids', () => {
  it("a refused set-part on B answers B's id and leaves A's pending load to complete with its own", () => {
    const posted: FromProcessor[] = [];
    const e = new DualSlotEngine({ sampleRateHz: FS, meterHz: 0, post: (m) => posted.push(m) });
    e.handle({ type: 'load-design', slot: 'B', design: TT, requestId: 1 });
    for (let b = 0; b < LOAD_BLOCKS; b++) e.process(new Float32Array(128), new Float32Array(128), 128);
    posted.length = 0;
    e.handle({ type: 'load-design', slot: 'A', design: PT, requestId: 2 });
    e.handle({ type: 'set-part', slot: 'B', part: { ...tube(TT, 'V1'), nodes: { plate: 'x', grid: 'y', cathode: 'z' } }, requestId: 3 });
    for (let b = 0; b < LOAD_BLOCKS; b++) e.process(new Float32Array(128), new Float32Array(128), 128);
    const err = posted.find((m) => m.type === 'error');
    expect(err).toMatchObject({ type: 'error', requestId: 3 });
    expect(posted.find((m) => m.type === 'loaded')).toMatchObject({ type: 'loaded', slot: 'A', requestId: 2 });
  });
});

describe('warm-up before the swap', () => {
  it('a new engine is warmed a few samples per block, heard only after, and starts exactly where a fresh one does', () => {
    const posted: FromProcessor[] = [];
    // limiter off: its gain memory would carry the fade-in's difference on (this compares the circuits)
    const warmed = new DualSlotEngine({ sampleRateHz: FS, meterHz: 0, post: (m) => posted.push(m), initial: [{ type: 'set-limiter', enabled: false }] });
    warmed.handle({ type: 'load-design', slot: 'A', design: PT, plan: buildSlotPlan(PT, FS, 4), requestId: 1 });
    const silence = new Float32Array(128),
      out = new Float32Array(128);
    let blocks = 0;
    while (!posted.some((m) => m.type === 'loaded') && blocks < LOAD_BLOCKS) {
      warmed.process(silence, out, 128);
      blocks++;
    }
    // not swapped in at once: the warm-up takes at least WARM_BASE_SAMPLES / 32 blocks
    expect(blocks).toBeGreaterThan(WARM_BASE_SAMPLES / 32);
    expect(blocks).toBeLessThan(LOAD_BLOCKS);
    // reference: the same plan loaded before the first block (no warm-up), fed from the swap on;
    // equal to the Newton tolerance (1e-5 V on a full scale of 1 V, the engine's default; from memory)
    const fresh = new DualSlotEngine({
      sampleRateHz: FS,
      meterHz: 0,
      initial: [
        { type: 'set-limiter', enabled: false },
        { type: 'load-design', slot: 'A', design: PT, plan: buildSlotPlan(PT, FS, 4) },
      ],
    });
    fresh.process(silence, out, 128);
    const a = new Float32Array(128),
      b = new Float32Array(128);
    let worst = 0,
      peak = 0;
    for (let k = 0; k < 40; k++) {
      const x = Float32Array.from({ length: 128 }, (_, j) => 0.8 * Math.sin((2 * Math.PI * 330 * (128 * k + j)) / FS));
      warmed.process(x, a, 128);
      fresh.process(x, b, 128);
      // after the 5 ms fade-in (2 blocks) the warmed slot must equal the fresh one: the warm-up left no state behind
      if (k >= 3)
        for (let j = 0; j < 128; j++) {
          worst = Math.max(worst, Math.abs(a[j]! - b[j]!));
          peak = Math.max(peak, Math.abs(b[j]!));
        }
    }
    expect(peak).toBeGreaterThan(0.01);
    expect(worst).toBeLessThan(1e-5);
  });
});

describe('main-thread requests (src/audio/requests.ts) with the processor', () => {
  it('messages keep their order while plans are built; a plan that fails posts nothing and fails only its own request', async () => {
    const e = new DualSlotEngine({ sampleRateHz: FS, meterHz: 0, post: (m) => replies.settle(m) });
    const replies = new PendingReplies();
    const posted: string[] = [];
    const box = new Outbox((m) => {
      posted.push(`${m.type}${'slot' in m ? m.slot : ''}`);
      e.handle(m);
    });
    const later = <T>(v: T, ms: number): Promise<T> => new Promise((r) => setTimeout(() => r(v), ms));
    const a = replies.open(),
      bad = replies.open(),
      b = replies.open();
    const badOutcome = bad.reply.then(
      () => 'resolved',
      (err: Error) => err.message,
    );
    // A's plan arrives late, the next one fails, B's arrives first: posted in the order sent
    box.send(later({ type: 'load-design', slot: 'A', design: PT, plan: buildSlotPlan(PT, FS, 4), requestId: a.id } as const, 30));
    box.send(
      Promise.reject(new Error('no plan')).catch((err: Error) => {
        replies.fail(bad.id, err);
        return null;
      }),
    );
    box.send({ type: 'set-output-scale', slot: 'A', voltsAtFullScale: 2 });
    box.send(later({ type: 'load-design', slot: 'B', design: TT, plan: buildSlotPlan(TT, FS, 4), requestId: b.id } as const, 1));
    expect(box.pending).toBe(4);
    await box.flushed();
    expect(posted).toEqual(['load-designA', 'set-output-scaleA', 'load-designB']);
    expect(await badOutcome).toBe('no plan');
    // a refused message on B with its own id: A's and B's loads still complete with theirs
    const refused = replies.open();
    e.handle({ type: 'set-part', slot: 'B', part: { ...tube(TT, 'V1'), nodes: { plate: 'x', grid: 'y', cathode: 'z' } }, requestId: refused.id });
    await expect(refused.reply).rejects.toThrow(/changes its nodes/);
    for (let k = 0; k < LOAD_BLOCKS && replies.size > 0; k++) e.process(new Float32Array(128), new Float32Array(128), 128);
    await expect(a.reply).resolves.toMatchObject({ slot: 'A', designName: PT.name });
    await expect(b.reply).resolves.toMatchObject({ slot: 'B', designName: TT.name });
  });
});
