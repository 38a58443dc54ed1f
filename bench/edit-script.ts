// The scripted editing session both edit benchmarks replay (bench/worklet.browser.bench.ts in
// Chromium, bench/edit-quanta.bench.ts in Node): design loads, tube type changes, quality changes,
// pot glides, a monitor switch and a reset, at the live default.
import { TEMPLATES } from '../src/dsp/circuit/templates.ts';
import { DEFAULT_LIVE_FACTOR } from '../src/dsp/realtime/dual-slot-engine.ts';
import type { Design, Part } from '../src/dsp/circuit/design.ts';
import type { ToProcessor } from '../src/dsp/realtime/messages.ts';

export const EDIT_A = TEMPLATES['pentode-triode']!,
  EDIT_B = TEMPLATES['triode-triode']!;
const SP = TEMPLATES['single-pentode']!;
const part = (d: Design, id: string): Part => {
  const p = d.parts.find((q) => q.id === id);
  if (!p) throw new Error(id);
  return p;
};
const retube = (d: Design, id: string, type: string): Part => ({ ...part(d, id), type }) as Part;
const pot = (d: Design, id: string, position: number): Part => ({ ...part(d, id), position }) as Part;
const A = EDIT_A,
  B = EDIT_B;

/** Each event's messages, posted before the render quantum it names. */
export const EDIT_SCRIPT: readonly { quantum: number; messages: ToProcessor[] }[] = [
  { quantum: 100, messages: [{ type: 'load-design', slot: 'A', design: SP }] },
  { quantum: 200, messages: [{ type: 'load-design', slot: 'B', design: A }] },
  {
    quantum: 300,
    messages: [
      { type: 'load-design', slot: 'A', design: A },
      { type: 'load-design', slot: 'B', design: B },
    ],
  },
  { quantum: 400, messages: [{ type: 'set-part', slot: 'A', part: retube(A, 'V2', '12AT7') }] },
  { quantum: 500, messages: [{ type: 'set-part', slot: 'B', part: retube(B, 'V1', '12AU7') }] },
  { quantum: 600, messages: [{ type: 'set-quality', factor: 2 }] },
  { quantum: 700, messages: [{ type: 'set-quality', factor: DEFAULT_LIVE_FACTOR }] },
  { quantum: 800, messages: [{ type: 'set-part', slot: 'A', part: pot(A, 'VOL', 0.3) }] },
  {
    quantum: 900,
    messages: [
      { type: 'set-part', slot: 'A', part: pot(A, 'TONE', 0.9) },
      { type: 'set-part', slot: 'B', part: pot(B, 'VOL', 0.8) },
    ],
  },
  {
    quantum: 1000,
    messages: [
      { type: 'monitor', target: 'B' },
      { type: 'set-part', slot: 'B', part: retube(B, 'V2', '6DJ8') },
    ],
  },
  { quantum: 1100, messages: [{ type: 'reset' }] },
];
/**
 * Quanta timed after each event: a new engine is warmed up a few samples per block before it is
 * swapped in (dual-slot-engine.ts, WARM_BASE_SAMPLES: about 25 blocks), so the swap and the
 * first blocks of the new engine fall inside this window.
 */
export const EDIT_WINDOW_QUANTA = 48;
/** Quanta with no event, timed for the baseline (their windows overlap no event's: one suspension per quantum). */
export const QUIET_QUANTA = [40, 150, 250, 350, 450, 550, 650, 750, 850, 950, 1050, 1150, 1200, 1250];
/** Quanta the session renders. */
export const SESSION_QUANTA = 1300;
