// Demo riffs of our own invention. Scenario: a builder at the bench checking a new
// two-stage fuzz with a few stock phrases played on a 648 mm-scale guitar.

import { SINGLE_COIL_BRIDGE, SINGLE_COIL_NECK, TWIN_COIL_BRIDGE } from './pickup.ts';
import type { NoteEvent, Riff } from './riff.ts';

/** Strum: one note per string, low to high, `spreadSeconds` apart. */
function strum(
  startSeconds: number,
  durationSeconds: number,
  notes: ReadonlyArray<readonly [midiNote: number, stringNumber: number]>,
  spreadSeconds: number,
  velocity: number,
  extra: Partial<NoteEvent> = {},
): NoteEvent[] {
  return notes.map(([midiNote, stringNumber], i) => ({
    ...extra,
    midiNote,
    stringNumber,
    startSeconds: startSeconds + i * spreadSeconds,
    durationSeconds: durationSeconds - i * spreadSeconds,
    velocity: Math.max(0, Math.min(1, velocity - 0.04 * i)),
  }));
}

const EIGHTH = 0.3;
const stepLine: ReadonlyArray<readonly [midiNote: number, eighths: number, velocity: number]> = [
  [45, 1, 0.55],
  [48, 1, 0.45],
  [50, 1, 0.6],
  [52, 1, 0.5],
  [55, 1, 0.6],
  [52, 1, 0.45],
  [50, 1, 0.55],
  [57, 2, 0.7],
  [55, 1, 0.5],
  [52, 1, 0.6],
  [50, 1, 0.4],
  [48, 1, 0.5],
  [45, 3, 0.65],
];

function line(): NoteEvent[] {
  const out: NoteEvent[] = [];
  let t = 0.05;
  for (const [midiNote, eighths, velocity] of stepLine) {
    out.push({ midiNote, startSeconds: t, durationSeconds: eighths * EIGHTH - 0.045, velocity, pickHardness: 0.5, pluckPosition: 0.2 });
    t += eighths * EIGHTH;
  }
  return out;
}

/** Single-note line, neck pickup, moderate picking. */
export const SLATE_STEPS: Riff = {
  name: 'slate-steps',
  title: 'Slate Steps',
  description: 'Single-note line in A minor pentatonic steps, neck single coil, soft to medium picking.',
  lengthSeconds: 5.0,
  pickup: SINGLE_COIL_NECK,
  seed: 11,
  notes: line(),
};

const E5 = [
  [40, 6],
  [47, 5],
  [52, 4],
] as const;
const G5 = [
  [43, 6],
  [50, 5],
  [55, 4],
] as const;
const A5 = [
  [45, 6],
  [52, 5],
  [57, 4],
] as const;
const C5 = [
  [48, 5],
  [55, 4],
  [60, 3],
] as const;
const B5 = [
  [47, 5],
  [54, 4],
  [59, 3],
] as const;
const MUTED: Partial<NoteEvent> = { decayLowSeconds: 0.35, decayHighSeconds: 0.08, pickHardness: 0.8, pluckPosition: 0.08 };
const OPEN: Partial<NoteEvent> = { pickHardness: 0.8, pluckPosition: 0.12 };
const Q = 0.25;

/** Power chords (root, fifth, octave) with palm-muted chugs, twin-coil bridge pickup. */
export const BOILER_FIFTHS: Riff = {
  name: 'boiler-fifths',
  title: 'Boiler Fifths',
  description: 'Root-fifth-octave chords with palm-muted chugs between them, twin-coil bridge pickup, hard downstrokes.',
  lengthSeconds: 5.0,
  pickup: TWIN_COIL_BRIDGE,
  // A twin-coil pickup puts out more than a single coil (about 1.5x here, from memory).
  softPeakVolts: 0.015,
  hardPeakVolts: 0.045,
  seed: 23,
  notes: [
    ...strum(0.05, 0.18, E5, 0.006, 0.7, MUTED),
    ...strum(0.05 + Q, 0.18, E5, 0.006, 0.65, MUTED),
    ...strum(0.05 + 2 * Q, 0.18, E5, 0.006, 0.7, MUTED),
    ...strum(0.05 + 3 * Q, 2 * Q, G5, 0.007, 0.9, OPEN),
    ...strum(0.05 + 5 * Q, 3 * Q, A5, 0.007, 0.95, OPEN),
    ...strum(0.05 + 8 * Q, 0.18, E5, 0.006, 0.7, MUTED),
    ...strum(0.05 + 9 * Q, 0.18, E5, 0.006, 0.65, MUTED),
    ...strum(0.05 + 10 * Q, 2 * Q, C5, 0.007, 0.9, OPEN),
    ...strum(0.05 + 12 * Q, 1.7, B5, 0.008, 1.0, OPEN),
  ],
};

const E_OPEN = [
  [40, 6],
  [47, 5],
  [52, 4],
  [56, 3],
  [59, 2],
  [64, 1],
] as const;
const A_SUS2 = [
  [45, 5],
  [52, 4],
  [57, 3],
  [59, 2],
  [64, 1],
] as const;

/** Two open chords left to ring, neck pickup. */
export const HARBOUR_LANTERN: Riff = {
  name: 'harbour-lantern',
  title: 'Harbour Lantern',
  description: 'An open E major chord strummed and left to ring, then an open A suspended-second, neck single coil.',
  lengthSeconds: 5.0,
  pickup: SINGLE_COIL_NECK,
  seed: 37,
  notes: [
    ...strum(0.08, 2.5, E_OPEN, 0.014, 0.8, { pickHardness: 0.55, pluckPosition: 0.22 }),
    ...strum(2.62, 2.3, A_SUS2, 0.016, 0.75, { pickHardness: 0.55, pluckPosition: 0.22 }),
  ],
};

/** One long note with a hard pick close to the bridge. */
export const LONG_FILAMENT: Riff = {
  name: 'long-filament',
  title: 'Long Filament',
  description: 'A single D4 on the second string, hard pick near the bridge, left to sustain; bridge single coil.',
  lengthSeconds: 5.0,
  pickup: SINGLE_COIL_BRIDGE,
  seed: 41,
  notes: [
    {
      midiNote: 62,
      stringNumber: 2,
      startSeconds: 0.1,
      durationSeconds: 4.75,
      velocity: 1,
      pickHardness: 1,
      pluckPosition: 0.09,
      decayLowSeconds: 8,
      decayHighSeconds: 0.8,
    },
  ],
};

export const DEMO_RIFFS: readonly Riff[] = [SLATE_STEPS, BOILER_FIFTHS, HARBOUR_LANTERN, LONG_FILAMENT];
