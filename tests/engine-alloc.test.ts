// Run-time value changes (CircuitEngine.setValues / setSwitch) recompile the engine's linear
// matrices in place. Checked here:
// - the reusable LinearNetworkCompiler against nodal analysis by hand (Millman's theorem /
//   voltage divider, common practice) over a sequence of value changes on one compiler;
// - a glided engine equals a freshly built engine with the final values (matrices, operating
//   point and output after both are reset): an incremental update must give what a build from
//   scratch gives (common practice);
// - the value-change path allocates nothing (project rule: the audio path allocates nothing per
//   block; the audio thread calls setValues on every glide step): no minor garbage collection
//   over 20000 value changes in a child process with a 1 MB semi-space. Observed with Node's
//   PerformanceObserver 'gc' entries (Node.js perf_hooks documentation) and
//   process.memoryUsage() (Node.js process documentation).
import { describe, expect, it } from 'vitest';
import { CircuitEngine, type EngineCircuit, type EngineElement } from '../src/dsp/circuit/engine.ts';
import { designCircuit, potLowerId, potUpperId, SUPPLY_ID } from '../src/dsp/circuit/design.ts';
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { LinearNetworkCompiler, type RootMatrices } from '../src/dsp/wdf/root-network.ts';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const RATE_HZ = 96_000; // 48 kHz at the default live factor 2 (dual-slot-engine.ts)
const GMIN_SIEMENS = 1e-12;

function template(name: string): EngineCircuit {
  const d = TEMPLATES[name];
  if (!d) throw new Error(`no template ${name}`);
  return designCircuit(d);
}

/** The circuit with some element values replaced (ohms, farads or volts by id; switches by id). */
function withValues(c: EngineCircuit, values: ReadonlyMap<string, number>, switches: ReadonlyMap<string, boolean> = new Map()): EngineCircuit {
  const elements = c.elements.map((e): EngineElement => {
    const v = values.get(e.id);
    if (e.kind === 'switch') {
      const closed = switches.get(e.id);
      return closed === undefined ? e : { ...e, closed };
    }
    if (v === undefined) return e;
    if (e.kind === 'resistor') return { ...e, ohms: v };
    if (e.kind === 'capacitor') return { ...e, farads: v };
    if (e.kind === 'dc-source') return { ...e, volts: v };
    throw new Error(`${e.id} has no value`);
  });
  return { ...c, elements };
}

function expectSameMatrices(a: RootMatrices, b: RootMatrices): void {
  expect([a.nodeCount, a.nu, a.m]).toEqual([b.nodeCount, b.nu, b.m]);
  for (const key of ['E', 'F', 'Pu', 'Pi', 'Zu', 'Zi'] as const) {
    const x = a[key],
      y = b[key];
    expect(x.length).toBe(y.length);
    let scale = 0,
      err = 0;
    for (let i = 0; i < y.length; i++) {
      scale = Math.max(scale, Math.abs(y[i]!));
      err = Math.max(err, Math.abs(x[i]! - y[i]!));
    }
    expect(err, key).toBeLessThanOrEqual(1e-12 * scale);
  }
}

describe('LinearNetworkCompiler reused for new values', () => {
  // Node 0 driven by an ideal source u (ohms 0: an extra MNA row with a zero diagonal, so the LU
  // must pivot), R1 from node 0 to node 1, R2 from node 1 to ground, a nonlinear port (current
  // i leaving node 1 to ground). By Millman's theorem (common practice), with G = G1 + G2 + gmin:
  //   v1 = (G1 u - i) / G,  so E = G1/G, F = -1/G; the source port voltage is u (Pu = 1).
  it('matches the voltage-divider formulas after every value change', () => {
    const compiler = new LinearNetworkCompiler({
      nodeCount: 2,
      conductances: [
        { a: 0, b: 1 },
        { a: 1, b: -1 },
      ],
      wavePorts: [{ a: 0, b: -1 }],
      idealPorts: [true],
      nonlinearPorts: [{ a: 1, b: -1 }],
      gminSiemens: GMIN_SIEMENS,
    });
    const out = compiler.createMatrices();
    const E = out.E,
      F = out.F;
    const siemens = new Float64Array(2),
      ohms = new Float64Array([0]);
    for (const [r1, r2] of [
      [10e3, 10e3],
      [1e3, 1e6],
      [470e3, 2.2e3],
      [100, 100e3],
    ] as const) {
      siemens[0] = 1 / r1;
      siemens[1] = 1 / r2;
      compiler.compile(siemens, ohms, out);
      const g = 1 / r1 + 1 / r2 + GMIN_SIEMENS;
      expect(out.E).toBe(E); // written in place
      expect(out.F).toBe(F);
      expect(Math.abs(out.E[0]! - 1 / r1 / g)).toBeLessThan(1e-14);
      expect(Math.abs(out.F[0]! + 1 / g)).toBeLessThan(1e-12 / g);
      expect(Math.abs(out.Pu[0]! - 1)).toBeLessThan(1e-14);
      expect(Math.abs(out.Zu[1]! - 1 / r1 / g)).toBeLessThan(1e-14);
    }
  });

  it('refuses to turn a resistive port into an ideal source at run time', () => {
    const compiler = new LinearNetworkCompiler({
      nodeCount: 1,
      conductances: [],
      wavePorts: [{ a: 0, b: -1 }],
      idealPorts: [false],
      nonlinearPorts: [],
      gminSiemens: GMIN_SIEMENS,
    });
    const out = compiler.createMatrices();
    compiler.compile(new Float64Array(0), new Float64Array([1e3]), out);
    // node voltage of a Thevenin source into gmin only: G/(G + gmin) (Millman, common practice)
    expect(Math.abs(out.Zu[0]! - 1e-3 / (1e-3 + GMIN_SIEMENS))).toBeLessThan(1e-15);
    expect(() => compiler.compile(new Float64Array(0), new Float64Array([0]), out)).toThrow(/ideal/);
  });
});

describe('a glided engine equals a fresh engine with the final values', () => {
  const cases: { name: string; pot: string; cap: string; sw?: string }[] = [
    { name: 'pentode-triode', pot: 'VOL', cap: 'C3' },
    { name: 'triode-triode', pot: 'TONE', cap: 'C6' },
    { name: 'single-pentode', pot: 'VOL', cap: 'C7', sw: 'S1' },
  ];
  for (const c of cases) {
    it(c.name, () => {
      const circuit = template(c.name);
      const e = new CircuitEngine(circuit, RATE_HZ);
      const matrices = e.linearMatrices;
      const up = { id: 'R3', value: 0 },
        cap = { id: c.cap, value: 0 },
        pu = { id: potUpperId(c.pot), value: 0 };
      const pl = { id: potLowerId(c.pot), value: 0 },
        bp = { id: SUPPLY_ID, value: 0 };
      const hasLower = circuit.elements.some((x) => x.id === pl.id);
      const updates = hasLower ? [up, cap, pu, pl] : [up, cap, pu];
      const values = new Map<string, number>();
      const switches = new Map<string, boolean>();
      const steps = 40;
      for (let k = 1; k <= steps; k++) {
        const f = k / steps;
        up.value = 470e3 * Math.pow(68e3 / 470e3, f); // geometric glide as in dual-slot-engine.ts
        cap.value = 100e-9 * Math.pow(0.33, f);
        pu.value = 1e3 + 300e3 * f;
        pl.value = 200e3 - 150e3 * f;
        e.setValues(updates);
        if (k % 10 === 0) {
          bp.value = 300 - k;
          e.setValues([bp]);
        }
        if (c.sw !== undefined && k % 7 === 0) {
          // closed, open, ..., closed at k = 35 (with S1 open the engine finds no DC operating
          // point: the cathode has no DC path, so a fresh engine cannot be built open)
          const closed = k % 14 !== 0;
          e.setSwitch(c.sw, closed);
          switches.set(c.sw, closed);
        }
        for (let n = 0; n < 32; n++) e.processSample(0.5 * Math.sin(n * 0.1));
      }
      for (const u of [...updates, bp]) values.set(u.id, u.value);
      const fresh = new CircuitEngine(withValues(circuit, values, switches), RATE_HZ);
      expect(e.linearMatrices).toBe(matrices); // the kernels read these arrays in place
      expectSameMatrices(e.linearMatrices, fresh.linearMatrices);

      const opA = e.operatingPoint(),
        opB = fresh.operatingPoint();
      for (const [node, volts] of Object.entries(opB.nodes)) expect(Math.abs(opA.nodes[node]! - volts), node).toBeLessThan(1e-9 * Math.max(1, Math.abs(volts)));

      // Same state (both at the operating point), same input: same output. The Newton solver
      // keeps some adaptive history (start predictor, curvature estimate), so the two differ
      // within its tolerance (1e-5 V per solve, engine.ts TRANSIENT) rather than bit for bit; over
      // 4000 samples of a 1.5 V drive with grid conduction those differences carry through the
      // coupling capacitors' states, so allow 1e-4 V on an output of volts.
      e.resetToOperatingPoint();
      fresh.resetToOperatingPoint();
      let maxDiff = 0,
        peak = 0;
      for (let n = 0; n < 4000; n++) {
        const vin = 1.5 * Math.sin((2 * Math.PI * 440 * n) / RATE_HZ);
        const a = e.processSample(vin),
          b = fresh.processSample(vin);
        maxDiff = Math.max(maxDiff, Math.abs(a - b));
        peak = Math.max(peak, Math.abs(b - opB.nodes[fresh.outputNodeName]!));
      }
      expect(peak).toBeGreaterThan(0.01); // a signal came through
      expect(maxDiff).toBeLessThan(1e-4);
    });
  }
});

/**
 * Runs `body` (TypeScript, top-level await allowed) as an esbuild bundle in a child node with
 * --expose-gc and a 1 MB semi-space (--max-semi-space-size=1), so every MB allocated forces a
 * minor collection. `body` calls `measure(run)`, which counts the minor collections (Node.js
 * perf_hooks 'gc' entries, detail.kind 1 = minor, Node.js documentation) while `run` runs and
 * returns them with the young generation's growth (v8.getHeapSpaceStatistics, 'new_space'); with
 * no minor collection in between, that growth is what `run` allocated. `body` prints one JSON line.
 * Why a child: the test runner's module transform routes every imported call through an accessor
 * and V8 boxes doubles it would not box in the bundle; heapUsed differences in the runner's own
 * heap with the default semi-space read 0-180 kB for the same loop from run to run.
 */
async function inChild<T>(imports: string, body: string): Promise<T> {
  const { build } = await import('esbuild');
  const dir = mkdtempSync(join(tmpdir(), 'vw-alloc-'));
  try {
    const entry = join(dir, 'entry.ts');
    writeFileSync(
      entry,
      `${imports}
      const gc = (globalThis as unknown as { gc: () => void }).gc;
      const { PerformanceObserver } = await import('node:perf_hooks');
      const { getHeapSpaceStatistics } = await import('node:v8');
      // bytes in the young generation only: what the code allocates (optimised code, feedback and
      // other compiler output land in other spaces and would make heapUsed jump run to run)
      const newSpaceBytes = () => getHeapSpaceStatistics().find((x) => x.space_name === 'new_space')!.space_used_size;
      const tick = () => new Promise((r) => setTimeout(r, 30));
      async function measure(run: () => void): Promise<{ minorCollections: number; heapGrowthBytes: number }> {
        let minor = 0;
        const obs = new PerformanceObserver((list) => { for (const en of list.getEntries()) if ((en as unknown as { detail?: { kind?: number } }).detail?.kind === 1) minor++; });
        obs.observe({ entryTypes: ['gc'] });
        gc(); await tick(); minor = 0;
        const h0 = newSpaceBytes();
        run();
        const h1 = newSpaceBytes();
        await tick();
        obs.disconnect();
        return { minorCollections: minor, heapGrowthBytes: h1 - h0 };
      }
      ${body}
    `,
    );
    const out = join(dir, 'entry.mjs');
    await build({ entryPoints: [entry], bundle: true, platform: 'node', format: 'esm', outfile: out, logLevel: 'silent' });
    // --no-concurrent-recompilation: V8 optimises on the main thread, so warm-up ends with the
    // optimised code in place however loaded the machine is (with background compilation a busy
    // machine left the measured loop in unoptimised code that boxes doubles, now and then)
    const text = execFileSync(process.execPath, ['--expose-gc', '--max-semi-space-size=1', '--no-concurrent-recompilation', out], { encoding: 'utf8' });
    return JSON.parse(text.trim().split('\n').pop()!) as T;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

const SRC = new URL('../src/', import.meta.url).pathname;
const importFrom = (names: string, file: string) => `import { ${names} } from ${JSON.stringify(join(SRC, file))};`;

// The loops measured below change values only. processSample is left out of the measured window:
// it is the convenience entry (a number in, a number out), and V8 boxes a double passed to or
// returned from a call it does not inline, so a caller's loop may allocate around it. The audio
// path uses the array entries (CircuitEngine.stepFrom, OversampledCircuit.processRange), checked
// at the end of this file.
describe('value changes allocate nothing (child process, 1 MB semi-space)', () => {
  const CALLS = 20_000; // at most 50 bytes per call before a 1 MB semi-space fills and collects
  const cases: { name: string; updates: string[]; lo: number[]; hi: number[]; sw?: string }[] = [
    // pentode-triode: R3, the volume pot's two halves, C3, B+
    {
      name: 'pentode-triode',
      updates: ['R3', 'VOL.upper', 'VOL.lower', 'C3', 'SUPPLY'],
      lo: [470e3, 200e3, 300e3, 100e-9, 300],
      hi: [330e3, 250e3, 250e3, 82e-9, 295],
    },
    // single-pentode: R5, C7 and the switch S1
    { name: 'single-pentode', updates: ['R5', 'C7'], lo: [2.2e3, 22e-6], hi: [1.5e3, 10e-6], sw: 'S1' },
  ];
  for (const c of cases) {
    it(`${c.name}: ${CALLS} setValues (${c.updates.join(', ')})${c.sw ? ` and setSwitch (${c.sw})` : ''}: no minor collection`, async () => {
      const ids = c.updates.map((u) =>
        u === 'VOL.upper' ? 'potUpperId("VOL")' : u === 'VOL.lower' ? 'potLowerId("VOL")' : u === 'SUPPLY' ? 'SUPPLY_ID' : JSON.stringify(u),
      );
      const r = await inChild<{ minorCollections: number; heapGrowthBytes: number; finite: boolean }>(
        importFrom('CircuitEngine', 'dsp/circuit/engine.ts') +
          importFrom('designCircuit, potLowerId, potUpperId, SUPPLY_ID', 'dsp/circuit/design.ts') +
          importFrom('TEMPLATES', 'dsp/circuit/templates.ts'),
        `
        const e = new CircuitEngine(designCircuit(TEMPLATES[${JSON.stringify(c.name)}]!), ${RATE_HZ});
        const updates = [${ids.map((id) => `{ id: ${id}, value: 0 }`).join(', ')}];
        const lo = ${JSON.stringify(c.lo)}, hi = ${JSON.stringify(c.hi)};
        const sw = ${JSON.stringify(c.sw ?? null)};
        const loop = (calls: number, samples: number) => {
          for (let k = 0; k < calls; k++) {
            const odd = (k & 1) === 1;
            for (let j = 0; j < updates.length; j++) updates[j]!.value = odd ? hi[j]! : lo[j]!;
            e.setValues(updates);
            if (sw !== null && k % 16 === 0) e.setSwitch(sw, (k & 16) === 0);
            for (let n = 0; n < samples; n++) e.processSample(odd ? 0.1 : -0.1);
          }
        };
        loop(${CALLS}, 8); loop(${CALLS}, 0); // warm-up: optimised code, with samples in between
        const m = await measure(() => loop(${CALLS}, 0));
        let finite = true;
        for (let n = 0; n < 100; n++) if (!Number.isFinite(e.processSample(0.1))) finite = false;
        console.log(JSON.stringify({ ...m, finite }));
        `,
      );
      expect(r.minorCollections, JSON.stringify(r)).toBe(0);
      expect(r.heapGrowthBytes / CALLS, JSON.stringify(r)).toBeLessThan(50);
      expect(r.finite).toBe(true); // and the engine still works
    }, 120_000);
  }
});

describe('the audio path allocates nothing per block', () => {
  // Measured on the code as shipped: an esbuild bundle (as the worklet and the CLI are built) run in
  // a child node (inChild above). 4000 blocks (512 k samples) after warm-up with no minor
  // collection means under 2 bytes per sample. heapUsed differences over short rounds mislead (a
  // collection inside a round hides what it collected; right after one, the first allocation
  // takes a fresh area and heapUsed jumps whatever the code does): an old form of this test read
  // 0.6-1.9 bytes per sample while the path in fact allocated about 1.4 kB per sample.
  // What allocated, found this way: branches that yield a constant (a module-level const, or
  // a field V8 tracks as constant) beside a computed double, e.g. `if (e > CAP) e = CAP`, make
  // TurboFan merge the value as a tagged number and box it; the code uses Math.min/Math.max.
  it.each([
    [0.7, false],
    [1.5, false],
    [1.5, true],
  ] as const)(
    'DualSlotEngine.process, two slots at the live default, %d of full scale, live input %s: no minor collection in 4000 blocks',
    async (level, live) => {
      const r = await inChild<{ minorCollections: number; heapGrowthBytes: number; finite: boolean }>(
        importFrom('DualSlotEngine', 'dsp/realtime/dual-slot-engine.ts') + importFrom('TEMPLATES', 'dsp/circuit/templates.ts'),
        `
      const e = new DualSlotEngine({ sampleRateHz: 48000, meterHz: 0, post: () => {}, initial: [
        { type: 'load-design', slot: 'A', design: TEMPLATES['pentode-triode']! },
        { type: 'load-design', slot: 'B', design: TEMPLATES['triode-triode']! },
        { type: 'set-input-calibration', voltsAtFullScale: 0.5 }, { type: 'set-live-input', live: ${live} }] });
      const x = new Float32Array(128), y = new Float32Array(128);
      let t = 0, finite = true;
      const blocks = (nb: number) => { for (let b = 0; b < nb; b++) { for (let k = 0; k < 128; k++, t++) x[k] = ${level} * Math.sin((2 * Math.PI * 196 * t) / 48000); e.process(x, y, 128); for (let k = 0; k < 128; k++) if (!Number.isFinite(y[k]!)) finite = false; } };
      blocks(3000);
      const m = await measure(() => blocks(4000));
      console.log(JSON.stringify({ ...m, finite }));
      `,
      );
      expect(r.finite).toBe(true);
      expect(r.minorCollections, JSON.stringify(r)).toBe(0);
      expect(r.heapGrowthBytes / (4000 * 128), JSON.stringify(r)).toBeLessThan(2);
    },
    120_000,
  );
});
