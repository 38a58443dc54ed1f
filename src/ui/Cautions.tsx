// Safety cautions: shown on first run and before live input is enabled.
import { useEffect, useRef, type ReactElement } from 'react';

export function CautionDialog({ kind, onAccept, onCancel }: { kind: 'first-run' | 'live'; onAccept: () => void; onCancel?: () => void }): ReactElement {
  const ref = useRef<HTMLDialogElement | null>(null);
  useEffect(() => {
    const d = ref.current;
    if (d && !d.open) d.showModal();
  }, []);
  return (
    <dialog
      ref={ref}
      className="caution"
      aria-labelledby="caution-h"
      onCancel={(e) => {
        e.preventDefault();
        (onCancel ?? onAccept)();
      }}
    >
      <h2 id="caution-h">{kind === 'live' ? 'Before you turn on live input' : 'Before you start'}</h2>
      {kind === 'first-run' ? (
        <>
          <p>
            <strong>High voltage.</strong> The circuits modelled here run their plates at hundreds of volts DC, and the filter capacitors hold a lethal charge
            after power is removed. This program hears and checks a design; it does not make a build safe. Follow your local electrical codes and licensed
            practice, and have work on mains-powered equipment checked by someone qualified.
          </p>
          <p>
            <strong>Hearing.</strong> Fuzz circuits are loud and can jump in level when parts change. Start with the volume low, prefer speakers or headphones
            at a moderate level, and stop if anything sounds painful.
          </p>
        </>
      ) : (
        <>
          <p>
            <strong>Use headphones.</strong> With speakers, the guitar pickup and microphone can feed back into a howl that rises very fast.
          </p>
          <p>
            Live input starts <strong>muted</strong>. Press <kbd>M</kbd> (or the Mute button) at any time to silence it. A limiter stays on for live input, but
            keep the level low while you check the sound.
          </p>
        </>
      )}
      <div className="actions">
        {onCancel && (
          <button type="button" onClick={onCancel}>
            Not now
          </button>
        )}
        <button type="button" className="primary" autoFocus onClick={onAccept}>
          {kind === 'live' ? 'I am on headphones: enable input (muted)' : 'I understand'}
        </button>
      </div>
    </dialog>
  );
}
