// Actions that need the port or the browser as well as the store: opening files and clips.
import { useCallback } from 'react';
import { validateDesign } from '../../dsp/circuit/design.ts';
import { parseNetlist, NETLIST_SCHEMA } from '../../dsp/circuit/netlist.ts';
import { netlistToDesign } from '../../dsp/circuit/netlist-design.ts';
import { importDesignText } from '../model/design-file.ts';
import { formatVolts } from '../model/meters.ts';
import { withSlot } from '../model/workspace.ts';
import type { SourceClip } from '../audio-port.ts';
import type { DemoClip } from '../Listen.tsx';
import { useWorkspace } from './context.ts';

export interface FileActions {
  openDesignFile(f: File): Promise<void>;
  openAudioFile(f: File): Promise<void>;
  chooseDemo(d: DemoClip): Promise<void>;
  takeToClip(c: SourceClip | null): void;
}

export function useFileActions(): FileActions {
  const { state, dispatch, port } = useWorkspace();
  const { active, calibrationVolts } = state;
  const slots = state.history.present;
  const say = useCallback((text: string, bad = false) => dispatch({ type: 'say', text, bad }), [dispatch]);
  return {
    async openDesignFile(f) {
      const text = await f.text();
      let doc: unknown = null;
      try {
        doc = JSON.parse(text);
      } catch {
        /* importDesignText says why */
      }
      if (typeof doc === 'object' && doc !== null && (doc as { schema?: unknown }).schema === NETLIST_SCHEMA) {
        // a netlist (ours or another tool's) is a circuit too: it becomes a design, saying what it lacks
        try {
          const conv = netlistToDesign(parseNetlist(doc), f.name.replace(/\.json$/i, ''));
          const d = validateDesign(conv.design);
          dispatch({
            type: 'commit',
            slots: withSlot(slots, active, d),
            say: `Imported the netlist ${f.name} into slot ${active}. A netlist lacks some of a design: ${conv.lost.join('; ')}.`,
          });
        } catch (err) {
          say(`${f.name}: ${(err as Error).message} — your current design was kept.`, true);
        }
        return;
      }
      const r = importDesignText(text, f.name);
      if (!r.ok) {
        say(`${r.reason} — your current design was kept.`, true);
        return;
      }
      dispatch({ type: 'commit', slots: withSlot(slots, active, r.design), say: `Imported "${r.design.name}" into slot ${active}.` });
    },
    async openAudioFile(f) {
      try {
        const c = await port.decode(await f.arrayBuffer(), f.name);
        dispatch({ type: 'clip', clip: c, name: f.name });
        say(`Loaded ${f.name} (${c.sampleRateHz} Hz, ${(c.samples.length / c.sampleRateHz).toFixed(1)} s). Set the input calibration to your pickup's level.`);
      } catch {
        say(`${f.name}: the browser could not decode this as audio`, true);
      }
    },
    async chooseDemo(d) {
      try {
        const bytes = await (await fetch(`/demo/${d.file}`)).arrayBuffer();
        const c = await port.decode(bytes, d.title);
        dispatch({ type: 'clip', clip: { ...c, voltsAtFullScale: d.voltsAtFullScale }, name: d.title });
        const v = d.voltsAtFullScale;
        if (v && Math.abs(v - calibrationVolts) > 1e-9 * v) {
          dispatch({
            type: 'say',
            text: `${d.title} was recorded for ${formatVolts(v)} peak at full scale; the input calibration stays ${formatVolts(calibrationVolts)}.`,
            action: {
              label: `Set the calibration to ${formatVolts(v)}`,
              run: () => {
                dispatch({ type: 'calibration', volts: v });
                say(`Input calibration set to ${formatVolts(v)} at full scale, the clip's own figure.`);
              },
            },
          });
        }
      } catch (err) {
        say(`could not load ${d.title}: ${(err as Error).message}`, true);
      }
    },
    takeToClip(c) {
      if (!c) {
        say('The take was empty: nothing was recorded.', true);
        return;
      }
      dispatch({ type: 'clip', clip: { ...c, voltsAtFullScale: calibrationVolts }, name: c.name });
      say(
        `Recorded ${c.name}, ${(c.samples.length / c.sampleRateHz).toFixed(1)} s of the input (before the circuit): it is now the clip, so A, B and dry play the same take.`,
      );
    },
  };
}

/** Offer bytes as a download under a file name. */
export function download(data: BlobPart, type: string, fileName: string): void {
  const a = document.createElement('a');
  a.href = URL.createObjectURL(new Blob([data], { type }));
  a.download = fileName;
  a.click();
  setTimeout(() => URL.revokeObjectURL(a.href), 1000);
}
