// Always on screen (the bar sticks to the bottom of the window): play, loop, what is heard (A, B,
// dry), copy A to B and the loudness match, whatever panel is open above.
import type { ReactElement } from 'react';
import { copySlot } from '../model/workspace.ts';
import { useWorkspace } from '../store/context.ts';

export function TransportBar(): ReactElement {
  const { state, dispatch, port, status } = useWorkspace();
  const { clip, clipName, loop, monitor, matched } = state;
  const dur = status?.durationSeconds ?? 0;
  const togglePlay = () => {
    if (status?.playing) port.stop();
    else void port.play();
  };
  return (
    <div className="transport-bar" role="region" aria-label="Transport">
      <button type="button" className="primary" onClick={togglePlay} disabled={!clip} aria-keyshortcuts="Space" data-testid="play">
        {status?.playing ? 'Stop' : 'Play'}
      </button>
      <button type="button" onClick={() => dispatch({ type: 'loop', region: null })} disabled={!loop}>
        Clear loop
      </button>
      <span className="fine clip-status">
        {clip
          ? `${clipName} · ${dur.toFixed(1)} s${loop ? ` · loop ${loop.startSeconds.toFixed(2)}–${loop.endSeconds.toFixed(2)} s` : ''}`
          : 'no clip yet (Listen: demo clip or file)'}
        {status?.rendering ? ' · rendering…' : ''}
      </span>
      <div className="row ab" role="group" aria-label="Compare">
        <div className="seg" role="radiogroup" aria-label="What you hear">
          {(['A', 'B', 'dry'] as const).map((s) => (
            <button
              key={s}
              type="button"
              role="radio"
              aria-checked={monitor === s}
              className={`slot-${s}`}
              onClick={() => dispatch({ type: 'hear', monitor: s })}
              aria-keyshortcuts={s === 'dry' ? 'D' : s}
            >
              {s === 'dry' ? 'Dry' : s}
            </button>
          ))}
        </div>
        <button type="button" onClick={() => dispatch({ type: 'commit', slots: copySlot(state.history.present, 'A'), say: 'Copied slot A to slot B.' })}>
          Copy A → B
        </button>
        <label className="inline-label">
          <input type="checkbox" checked={matched} onChange={(e) => dispatch({ type: 'matched', on: e.target.checked })} /> loudness-matched
        </label>
        <span
          className="offset"
          data-testid="offset"
          title="Measured from the sound both slots make (BS.1770 K-weighting, last 3 s); the output loudness is measured the same way on what you hear"
        >
          {status?.offsetDb != null
            ? `B is ${status.offsetDb >= 0 ? '+' : ''}${status.offsetDb.toFixed(1)} dB against A${matched ? ` (B gain ${status.matchGainDb >= 0 ? '+' : ''}${status.matchGainDb.toFixed(1)} dB)` : ''}`
            : 'level offset: — (play something)'}
        </span>
        <span className="offset" data-testid="output-lufs">
          output {status?.outputLufs != null ? `${status.outputLufs.toFixed(1)} LUFS` : '—'} (3 s)
        </span>
      </div>
    </div>
  );
}
