// The workspace's state in one place: a reducer over typed actions (pure, no DOM), and the one
// function that mirrors what the audio port needs from it (syncPort). Components read the state
// and dispatch actions; nothing else holds a copy of a setting.
import { DEFAULT_INPUT_VOLTS_AT_FULL_SCALE, validateDesign, type Design } from '../../dsp/circuit/design.ts';
import { modelDesign } from '../model/worst-case.ts';
import type { Monitor, Slot } from '../../dsp/realtime/messages.ts';
import type { OversamplingFactor } from '../../dsp/oversampling/oversampler.ts';
import { DEFAULT_LIVE_FACTOR } from '../../dsp/realtime/dual-slot-engine.ts';
import type { LiveInputOptions } from '../../audio/index.ts';
import type { LoopRegion, SourceClip } from '../audio-port.ts';
import { pushHistory, redo, startHistory, undo, type History } from '../model/history.ts';
import { initialSlots, withSlot, type Slots } from '../model/workspace.ts';

export type Caution = 'first-run' | 'live';
/** A message in the banner, with an optional offer (a button that does something). */
export interface Message {
  readonly text: string;
  readonly bad: boolean;
  readonly action?: { readonly label: string; readonly run: () => void };
}
export type PanelTab = 'listen' | 'analyses' | 'see';

export interface WorkspaceState {
  readonly history: History<Slots>;
  /** The slot on screen (edited). */
  readonly active: Slot;
  /** What is heard. */
  readonly monitor: Monitor;
  readonly selected: string | null;
  readonly message: Message | null;
  readonly clip: SourceClip | null;
  readonly clipName: string;
  /** Volts at the circuit input for a full-scale sample. */
  readonly calibrationVolts: number;
  readonly loop: LoopRegion | null;
  readonly matched: boolean;
  readonly quality: OversamplingFactor;
  readonly guarded: boolean;
  readonly cabinet: string;
  readonly liveChoice: LiveInputOptions;
  readonly caution: Caution | null;
  readonly scopeNodes: readonly string[] | null;
  readonly tab: PanelTab;
}

export type Action =
  | { readonly type: 'commit'; readonly slots: Slots; readonly say?: string }
  | { readonly type: 'edit-design'; readonly design: Design; readonly say?: string; readonly select?: string | null }
  | { readonly type: 'load-slot'; readonly slot: Slot; readonly design: Design; readonly say?: string }
  | { readonly type: 'undo' }
  | { readonly type: 'redo' }
  | { readonly type: 'select'; readonly id: string | null }
  | { readonly type: 'say'; readonly text: string; readonly bad?: boolean; readonly action?: Message['action'] }
  | { readonly type: 'dismiss' }
  | { readonly type: 'hear'; readonly monitor: Monitor }
  | { readonly type: 'clip'; readonly clip: SourceClip; readonly name: string }
  | { readonly type: 'calibration'; readonly volts: number }
  | { readonly type: 'loop'; readonly region: LoopRegion | null }
  | { readonly type: 'matched'; readonly on: boolean }
  | { readonly type: 'quality'; readonly factor: OversamplingFactor }
  | { readonly type: 'guarded'; readonly on: boolean }
  | { readonly type: 'cabinet'; readonly key: string }
  | { readonly type: 'live-choice'; readonly options: LiveInputOptions }
  | { readonly type: 'caution'; readonly kind: Caution | null }
  | { readonly type: 'scope-nodes'; readonly nodes: readonly string[] }
  | { readonly type: 'tab'; readonly tab: PanelTab };

export function initialState(saved: { slots: Slots; active: Slot } | null, cautionRead: boolean): WorkspaceState {
  const active = saved?.active ?? 'A';
  return {
    history: startHistory(saved?.slots ?? initialSlots()),
    active,
    monitor: active,
    selected: null,
    message: null,
    clip: null,
    clipName: '',
    calibrationVolts: DEFAULT_INPUT_VOLTS_AT_FULL_SCALE,
    loop: null,
    matched: true,
    quality: DEFAULT_LIVE_FACTOR,
    guarded: true,
    cabinet: 'off',
    liveChoice: { channel: 'mix' },
    caution: cautionRead ? null : 'first-run',
    scopeNodes: null,
    tab: 'listen',
  };
}

/** The selection survives an undo or redo only when the part is still there. */
function keepSelection(s: WorkspaceState, slots: Slots): string | null {
  return s.selected !== null && slots[s.active].parts.some((p) => p.id === s.selected) ? s.selected : null;
}

export function reducer(s: WorkspaceState, a: Action): WorkspaceState {
  switch (a.type) {
    case 'commit': {
      const history = pushHistory(s.history, a.slots);
      return { ...s, history, selected: keepSelection(s, history.present), message: a.say ? { text: a.say, bad: false } : s.message };
    }
    case 'edit-design': {
      if (a.design === s.history.present[s.active]) return s;
      const history = pushHistory(s.history, withSlot(s.history.present, s.active, a.design));
      const next = { ...s, history, message: a.say ? { text: a.say, bad: false } : s.message };
      return { ...next, selected: a.select !== undefined ? a.select : keepSelection(next, history.present) };
    }
    case 'load-slot': {
      const history = pushHistory(s.history, withSlot(s.history.present, a.slot, a.design));
      return { ...s, history, selected: keepSelection(s, history.present), message: a.say ? { text: a.say, bad: false } : s.message };
    }
    case 'undo':
    case 'redo': {
      const history = a.type === 'undo' ? undo(s.history) : redo(s.history);
      return history === s.history ? s : { ...s, history, selected: keepSelection(s, history.present) };
    }
    case 'select':
      return { ...s, selected: a.id };
    case 'say':
      return { ...s, message: { text: a.text, bad: a.bad ?? false, ...(a.action ? { action: a.action } : {}) } };
    case 'dismiss':
      return { ...s, message: null };
    case 'hear': {
      const active = a.monitor === 'dry' ? s.active : a.monitor;
      return { ...s, monitor: a.monitor, active, selected: active === s.active ? s.selected : null };
    }
    // a clip never changes the input calibration by itself (its own figure is offered instead)
    case 'clip':
      return { ...s, clip: a.clip, clipName: a.name, loop: null };
    case 'calibration':
      return { ...s, calibrationVolts: a.volts };
    case 'loop':
      return { ...s, loop: a.region };
    case 'matched':
      return { ...s, matched: a.on };
    case 'quality':
      return { ...s, quality: a.factor };
    case 'guarded':
      return { ...s, guarded: a.on };
    case 'cabinet':
      return { ...s, cabinet: a.key };
    case 'live-choice':
      return { ...s, liveChoice: a.options };
    case 'caution':
      return { ...s, caution: a.kind };
    case 'scope-nodes':
      return { ...s, scopeNodes: a.nodes };
    case 'tab':
      return { ...s, tab: a.tab };
  }
}

const playableCache = new WeakMap<Design, string | null>();

/**
 * Why a design on the sheet cannot play yet (a node with one connection, a grid with no DC path,
 * ...), or null when it can. A sheet being built may be incomplete; the audio keeps the last
 * design that could play.
 */
export function playableProblem(d: Design): string | null {
  const hit = playableCache.get(d);
  if (hit !== undefined) return hit;
  let problem: string | null = null;
  try {
    validateDesign(d);
  } catch (err) {
    problem = (err as Error).message;
  }
  playableCache.set(d, problem);
  return problem;
}

/** What the audio port mirrors from the state. */
export interface PortSettings {
  readonly A: Design;
  readonly B: Design;
  readonly monitor: Monitor;
  readonly matched: boolean;
  readonly quality: OversamplingFactor;
  readonly guarded: boolean;
  readonly calibrationVolts: number;
  readonly loop: LoopRegion | null;
  readonly clip: SourceClip | null;
}

export interface SyncTarget {
  setDesign(slot: Slot, design: Design): void;
  setMonitor(target: Monitor): void;
  setLoudnessMatch(on: boolean): void;
  setQuality(factor: OversamplingFactor): void;
  setOverloadGuard(on: boolean): void;
  setInputCalibration(voltsAtFullScale: number): void;
  setLoop(region: LoopRegion | null): void;
  setSource(clip: SourceClip): void;
}

export function portSettings(s: WorkspaceState): PortSettings {
  const { A, B } = s.history.present;
  return {
    A,
    B,
    monitor: s.monitor,
    matched: s.matched,
    quality: s.quality,
    guarded: s.guarded,
    calibrationVolts: s.calibrationVolts,
    loop: s.loop,
    clip: s.clip,
  };
}

/**
 * Send the port what changed between two settings (everything when `prev` is null). A slot's
 * design goes only when it can play (otherwise the port keeps the last one that could), and as
 * the model runs it: with a power-supply section, the section's estimate is the B+.
 */
export function syncPort(port: SyncTarget, prev: PortSettings | null, next: PortSettings): void {
  for (const slot of ['A', 'B'] as const) {
    if (prev?.[slot] !== next[slot] && playableProblem(next[slot]) === null) port.setDesign(slot, modelDesign(next[slot]));
  }
  if (prev?.monitor !== next.monitor) port.setMonitor(next.monitor);
  if (prev?.matched !== next.matched) port.setLoudnessMatch(next.matched);
  if (prev?.quality !== next.quality) port.setQuality(next.quality);
  if (prev?.guarded !== next.guarded) port.setOverloadGuard(next.guarded);
  if (prev?.calibrationVolts !== next.calibrationVolts) port.setInputCalibration(next.calibrationVolts);
  if (prev?.clip !== next.clip && next.clip !== null) port.setSource(next.clip);
  if (prev !== null && prev.loop !== next.loop) port.setLoop(next.loop);
}
