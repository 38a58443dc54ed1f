// Live input: mute, stop, delay by part, take recorder, input and channel choice.
import { useEffect, useState, type ReactElement } from 'react';
import type { LiveInputDevice, LiveInputOptions } from '../../audio/index.ts';
import type { EnginePort } from '../audio-engine-port.ts';
import type { SourceClip } from '../audio-port.ts';
import { useWorkspace } from '../store/context.ts';
import { useFileActions } from '../store/actions.ts';

/** Start live input (always muted first); false when it could not start (the reason is said). */
export function useStartLive(): (options?: LiveInputOptions) => Promise<boolean> {
  const { state, dispatch, port } = useWorkspace();
  return async (options = state.liveChoice) => {
    try {
      await port.startLive(options);
      return true;
    } catch (err) {
      dispatch({ type: 'say', text: `live input: ${(err as Error).message}`, bad: true });
      return false;
    }
  };
}

export function LiveControls(): ReactElement {
  const { state, dispatch, port, status } = useWorkspace();
  const { takeToClip } = useFileActions();
  const startLive = useStartLive();
  const [inputs, setInputs] = useState<LiveInputDevice[]>([]);
  const live = status?.live ?? 'off';
  useEffect(() => {
    if (live !== 'off') void port.listInputs().then(setInputs);
  }, [port, live]);
  useEffect(() => {
    port.onTakeEnded((c) => takeToClip(c));
  });
  const { liveChoice } = state;
  // a different input or channel restarts the live input, muted (as every start is)
  const chooseLive = (next: LiveInputOptions) => {
    dispatch({ type: 'live-choice', options: next });
    void startLive(next).then((ok) => {
      if (ok) dispatch({ type: 'say', text: 'Live input restarted on the new choice, muted: unmute (M) when the level is safe.' });
    });
  };
  const toggleMute = () => {
    if (live === 'on') port.setMuted(true);
    else if (live === 'muted') port.setMuted(false);
  };
  if (live === 'off' || !status) {
    return (
      <div className="row live">
        <button type="button" onClick={() => dispatch({ type: 'caution', kind: 'live' })}>
          Live input…
        </button>
      </div>
    );
  }
  return (
    <div className="row live">
      <button type="button" className={live === 'on' ? 'danger' : ''} onClick={toggleMute} aria-keyshortcuts="M" data-testid="mute">
        {live === 'on' ? 'Mute (M)' : 'Unmute'}
      </button>
      <button type="button" onClick={() => port.stopLive()}>
        Stop live input
      </button>
      <span className="fine">
        {live === 'muted' ? 'live input muted' : 'live input on'}
        {status.message ? ` · ${status.message}` : ''}
      </span>
      <LatencyNote port={port} />
      <TakeButton port={port} onTake={takeToClip} />
      {inputs.length > 1 && (
        <label className="inline-label">
          Input
          <select value={liveChoice.deviceId ?? ''} onChange={(e) => chooseLive({ ...liveChoice, deviceId: e.target.value || undefined })}>
            <option value="">browser default</option>
            {inputs.map((d) => (
              <option key={d.deviceId} value={d.deviceId}>
                {d.label}
              </option>
            ))}
          </select>
        </label>
      )}
      <label
        className="inline-label"
        title="A two-input interface: pick the input the guitar is on (mixed averages both, so one guitar comes in at half level)"
      >
        Channel
        <select
          value={String(liveChoice.channel ?? 'mix')}
          onChange={(e) => chooseLive({ ...liveChoice, channel: e.target.value === 'mix' ? 'mix' : (Number(e.target.value) as 1 | 2) })}
        >
          <option value="mix">both, mixed</option>
          <option value="1">input 1</option>
          <option value="2" disabled={status.liveChannels < 2}>
            input 2
          </option>
        </select>
      </label>
    </div>
  );
}

/** The live path's delay, refreshed once a second (the output part can change with the device). */
function LatencyNote({ port }: { port: EnginePort }): ReactElement | null {
  const [lat, setLat] = useState(() => port.liveLatency());
  useEffect(() => {
    const t = setInterval(() => setLat(port.liveLatency()), 1000);
    return () => clearInterval(t);
  }, [port]);
  if (!lat) return null;
  const ms = (s: number) => (s * 1e3 < 1 ? (s * 1e3).toFixed(2) : (s * 1e3).toFixed(0));
  return (
    <span
      className={`fine${lat.totalSeconds > 0.02 ? ' warn' : ''}`}
      data-testid="latency"
      title="Input device + the circuit's oversampling filters + the browser's output buffering. Above about 10-20 ms playing feels late; a smaller buffer in the system's audio settings helps."
    >
      delay about {ms(lat.totalSeconds)} ms (input {ms(lat.inputSeconds)}, circuit {ms(lat.processingSeconds)}, output {ms(lat.outputSeconds)})
    </span>
  );
}

/** Record the live input as a take; stopping makes it the clip. */
function TakeButton({ port, onTake }: { port: EnginePort; onTake: (c: SourceClip | null) => void }): ReactElement {
  const [seconds, setSeconds] = useState<number | null>(() => port.takeSeconds());
  useEffect(() => {
    const t = setInterval(() => setSeconds(port.takeSeconds()), 250);
    return () => clearInterval(t);
  }, [port]);
  const toggle = () => {
    if (seconds === null) {
      port.startTake();
      setSeconds(0);
      return;
    }
    setSeconds(null);
    void port.stopTake().then(onTake);
  };
  return (
    <button
      type="button"
      data-testid="take"
      className={seconds !== null ? 'danger' : ''}
      onClick={toggle}
      title="Records the input itself (the DI, before the circuit), so the take can be played through A, B and dry and rendered for a client"
    >
      {seconds === null ? 'Record take' : `Stop take (${seconds.toFixed(1)} s)`}
    </button>
  );
}
