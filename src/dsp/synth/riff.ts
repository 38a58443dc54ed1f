// Note events -> pickup output voltage (volts at the amp input), and helpers for writing
// the result to a file with a known volts-per-full-scale calibration.

import { runBiquad } from './biquad.ts';
import { type PickupParams, applyPickupComb, pickupCombDelaySamples, pickupLoadFilter, validatePickup } from './pickup.ts';
import { designStringLoop, pluckExcitation, renderPluckedString } from './string.ts';

export interface NoteEvent {
  /** MIDI note number (A4 = 69 = 440 Hz); give this or frequencyHz. */
  readonly midiNote?: number;
  readonly frequencyHz?: number;
  readonly startSeconds: number;
  readonly durationSeconds: number;
  /** Picking strength 0 (soft) to 1 (hard). */
  readonly velocity: number;
  /** 1 = highest (E4) ... 6 = lowest (E2) in standard tuning; chosen automatically if absent. */
  readonly stringNumber?: number;
  /** Pick distance from the bridge as a fraction of the vibrating length, (0, 0.5]. */
  readonly pluckPosition?: number;
  /** 0 = flesh/soft, 1 = hard thin pick. */
  readonly pickHardness?: number;
  /** 60 dB decay time at low frequency, and at 3 kHz. */
  readonly decayLowSeconds?: number;
  readonly decayHighSeconds?: number;
}

export interface Instrument {
  readonly scaleLengthMetres: number;
  /** Open string frequencies, index 0 = string 1 (highest). */
  readonly openStringsHz: readonly number[];
}

export interface Riff {
  readonly name: string;
  readonly title: string;
  readonly description: string;
  readonly lengthSeconds: number;
  readonly pickup: PickupParams;
  readonly instrument?: Instrument;
  /** Peak pickup output of one note picked at velocity 0 and at 1 (volts). */
  readonly softPeakVolts?: number;
  readonly hardPeakVolts?: number;
  readonly seed?: number;
  readonly notes: readonly NoteEvent[];
}

export function midiToHz(midiNote: number): number {
  // Twelve-tone equal temperament with A4 = 440 Hz (MIDI note 69), common practice.
  return 440 * 2 ** ((midiNote - 69) / 12);
}

/** 648 mm scale (25.5 in, common practice), standard tuning E4 B3 G3 D3 A2 E2. */
export const STANDARD_GUITAR: Instrument = {
  scaleLengthMetres: 0.648,
  openStringsHz: [64, 59, 55, 50, 45, 40].map(midiToHz),
};

/** Single notes from 10 mV (soft) to 30 mV (hard) peak: pickup and DI level measurements, common practice, guitar signals (confirmed). */
export const DEFAULT_SOFT_PEAK_VOLTS = 0.01;
export const DEFAULT_HARD_PEAK_VOLTS = 0.03;
export const DECAY_HIGH_REFERENCE_HZ = 3000;
const RELEASE_T60_SECONDS = 0.12; // finger mute, by ear
// Re-picking a string: the pick stops the old vibration just before the new pluck (by ear).
const REPICK_T60_SECONDS = 0.012;
const REPICK_LEAD_SECONDS = 0.004;
const TAIL_AFTER_RELEASE_SECONDS = 0.6;

export function noteFrequencyHz(note: NoteEvent): number {
  const f = note.frequencyHz ?? (note.midiNote !== undefined ? midiToHz(note.midiNote) : Number.NaN);
  if (note.frequencyHz !== undefined && note.midiNote !== undefined) {
    throw new Error('a note must give midiNote or frequencyHz, not both');
  }
  if (!Number.isFinite(f) || f <= 0) throw new Error('a note needs a midiNote or a frequencyHz above 0');
  return f;
}

/** Highest string whose open pitch is at or below the note (lowest fret position), 1-based. */
export function chooseString(instrument: Instrument, frequencyHz: number): number {
  const strings = instrument.openStringsHz;
  for (let i = 0; i < strings.length; i++) {
    if ((strings[i] as number) <= frequencyHz * 1.0001) return i + 1;
  }
  throw new Error(`note ${frequencyHz.toFixed(2)} Hz is below the lowest open string`);
}

export function targetPeakVolts(riff: Riff, velocity: number): number {
  const soft = riff.softPeakVolts ?? DEFAULT_SOFT_PEAK_VOLTS;
  const hard = riff.hardPeakVolts ?? DEFAULT_HARD_PEAK_VOLTS;
  return soft + (hard - soft) * velocity;
}

/** Default decay times (by ear): low strings ring longer; highs die in under half a second. */
export function defaultDecayLowSeconds(frequencyHz: number): number {
  return Math.min(10, Math.max(1, 9 * (82.41 / frequencyHz) ** 0.6));
}

function validateRiff(riff: Riff, sampleRateHz: number): void {
  if (!Number.isFinite(sampleRateHz) || sampleRateHz < 8000 || sampleRateHz > 384000) {
    throw new Error(`sample rate must be from 8000 to 384000 Hz (got ${sampleRateHz})`);
  }
  if (!Number.isFinite(riff.lengthSeconds) || riff.lengthSeconds <= 0 || riff.lengthSeconds > 600) {
    throw new Error(`riff "${riff.name}" length must be from 0 to 600 s (got ${riff.lengthSeconds})`);
  }
  validatePickup(riff.pickup);
  riff.notes.forEach((note, i) => {
    const where = `riff "${riff.name}" note ${i}`;
    if (!Number.isFinite(note.startSeconds) || note.startSeconds < 0) throw new Error(`${where}: start must be 0 s or later`);
    if (!Number.isFinite(note.durationSeconds) || note.durationSeconds <= 0) throw new Error(`${where}: duration must be above 0 s`);
    if (!Number.isFinite(note.velocity) || note.velocity < 0 || note.velocity > 1) throw new Error(`${where}: velocity must be from 0 to 1`);
  });
}

interface ResolvedNote {
  readonly note: NoteEvent;
  readonly frequencyHz: number;
  readonly stringNumber: number;
  readonly releaseSeconds: number;
  readonly releaseT60Seconds: number;
  readonly index: number;
}

/** Fills in strings and cuts a note short when a later note starts on the same string. */
export function resolveNotes(riff: Riff): ResolvedNote[] {
  const instrument = riff.instrument ?? STANDARD_GUITAR;
  const base = riff.notes.map((note, index) => {
    const frequencyHz = noteFrequencyHz(note);
    const stringNumber = note.stringNumber ?? chooseString(instrument, frequencyHz);
    const open = instrument.openStringsHz[stringNumber - 1];
    if (open === undefined) throw new Error(`riff "${riff.name}" note ${index}: no string number ${stringNumber}`);
    if (frequencyHz < open * 0.9999) {
      throw new Error(`riff "${riff.name}" note ${index}: ${frequencyHz.toFixed(2)} Hz is below open string ${stringNumber}`);
    }
    return { note, frequencyHz, stringNumber, index };
  });
  return base.map((b) => {
    let release = b.note.startSeconds + b.note.durationSeconds;
    let releaseT60Seconds = RELEASE_T60_SECONDS;
    for (const o of base) {
      const cut = Math.max(b.note.startSeconds, o.note.startSeconds - REPICK_LEAD_SECONDS);
      if (o.stringNumber === b.stringNumber && o.note.startSeconds > b.note.startSeconds && cut < release) {
        release = cut;
        releaseT60Seconds = REPICK_T60_SECONDS;
      }
    }
    return { ...b, releaseSeconds: release, releaseT60Seconds };
  });
}

/**
 * Renders one note as the pickup's output voltage into the 1 M load, scaled so its peak is
 * targetPeakVolts(velocity). Returns the samples from the note's start.
 */
export function renderNoteVolts(riff: Riff, resolved: ResolvedNote, sampleRateHz: number, maxSamples: number): Float64Array {
  const instrument = riff.instrument ?? STANDARD_GUITAR;
  const { note, frequencyHz, stringNumber } = resolved;
  const length = Math.max(1, Math.min(maxSamples, Math.round((resolved.releaseSeconds - note.startSeconds + TAIL_AFTER_RELEASE_SECONDS) * sampleRateHz)));
  const decayHighHz = Math.min(0.45 * sampleRateHz, Math.max(DECAY_HIGH_REFERENCE_HZ, 2.5 * frequencyHz));
  const design = designStringLoop(
    frequencyHz,
    sampleRateHz,
    note.decayLowSeconds ?? defaultDecayLowSeconds(frequencyHz),
    note.decayHighSeconds ?? 0.45,
    decayHighHz,
  );
  const excitation = pluckExcitation(
    design.totalDelaySamples,
    note.pluckPosition ?? 0.16,
    note.pickHardness ?? 0.6,
    note.velocity,
    sampleRateHz,
    ((riff.seed ?? 1) * 7919 + resolved.index * 104729) >>> 0,
  );
  const string = renderPluckedString(
    {
      design,
      excitation,
      releaseSample: Math.round((resolved.releaseSeconds - note.startSeconds) * sampleRateHz),
      releaseSeconds: resolved.releaseT60Seconds,
      frequencyHz,
      sampleRateHz,
    },
    new Float64Array(length),
  );
  const open = instrument.openStringsHz[stringNumber - 1] as number;
  const combDelay = pickupCombDelaySamples(riff.pickup, instrument.scaleLengthMetres, open, sampleRateHz);
  const sensed = applyPickupComb(string, combDelay, new Float64Array(length));
  runBiquad(pickupLoadFilter(riff.pickup, sampleRateHz), sensed, sensed);
  let peak = 0;
  for (let n = 0; n < length; n++) peak = Math.max(peak, Math.abs(sensed[n] as number));
  if (!(peak > 0) || !Number.isFinite(peak)) throw new Error(`riff "${riff.name}" note ${resolved.index} rendered silence or a non-finite value`);
  const gain = targetPeakVolts(riff, note.velocity) / peak;
  for (let n = 0; n < length; n++) sensed[n] = (sensed[n] as number) * gain;
  return sensed;
}

/** Renders the whole riff in Float64: pickup output voltage (V) into its load. */
export function renderRiffVolts(riff: Riff, sampleRateHz: number): Float64Array {
  validateRiff(riff, sampleRateHz);
  const total = Math.round(riff.lengthSeconds * sampleRateHz);
  const mix = new Float64Array(total);
  for (const resolved of resolveNotes(riff)) {
    const start = Math.round(resolved.note.startSeconds * sampleRateHz);
    if (start >= total) continue;
    const v = renderNoteVolts(riff, resolved, sampleRateHz, total - start);
    for (let n = 0; n < v.length; n++) mix[start + n] = (mix[start + n] as number) + (v[n] as number);
  }
  return mix;
}

/** Pickup output voltage (V) into its load, as Float32. */
export function renderRiff(riff: Riff, sampleRateHz: number): Float32Array {
  return Float32Array.from(renderRiffVolts(riff, sampleRateHz));
}

export const DEMO_TARGET_PEAK_DBFS = -12;

/**
 * File calibration: a sample value of 1.0 (digital full scale) stands for voltsAtFullScale
 * volts at the pickup output. The clip is scaled so its peak sits at targetPeakDbfs.
 */
export function fileCalibration(volts: ArrayLike<number>, targetPeakDbfs: number = DEMO_TARGET_PEAK_DBFS): { voltsAtFullScale: number; gain: number } {
  if (!Number.isFinite(targetPeakDbfs) || targetPeakDbfs > 0) throw new Error(`target peak must be 0 dBFS or below (got ${targetPeakDbfs})`);
  let peak = 0;
  for (let n = 0; n < volts.length; n++) peak = Math.max(peak, Math.abs(volts[n] ?? 0));
  if (!(peak > 0) || !Number.isFinite(peak)) throw new Error('cannot calibrate a silent or non-finite clip');
  const voltsAtFullScale = peak / 10 ** (targetPeakDbfs / 20);
  return { voltsAtFullScale, gain: 1 / voltsAtFullScale };
}
