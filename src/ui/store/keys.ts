// Keyboard shortcuts: undo/redo, mute, A / B / dry, play, delete the selected part.
import { useEffect, useRef } from 'react';
import { removePart } from '../../dsp/circuit/edit.ts';
import { useWorkspace } from './context.ts';

export function useKeys(): void {
  const { state, dispatch, port, status } = useWorkspace();
  const keyRef = useRef<(e: KeyboardEvent) => void>(() => {});
  useEffect(() => {
    keyRef.current = (e: KeyboardEvent) => {
      const t = e.target as HTMLElement;
      const typing = t.closest('input, select, textarea, [contenteditable]') !== null;
      if ((e.ctrlKey || e.metaKey) && e.key.toLowerCase() === 'z' && !typing) {
        e.preventDefault();
        dispatch({ type: e.shiftKey ? 'redo' : 'undo' });
        return;
      }
      if ((e.ctrlKey || e.metaKey) && e.key.toLowerCase() === 'y' && !typing) {
        e.preventDefault();
        dispatch({ type: 'redo' });
        return;
      }
      if (e.key.toLowerCase() === 'm' && !e.ctrlKey && !e.metaKey && (!typing || e.altKey)) {
        e.preventDefault();
        if (status?.live !== 'off') port.setMuted(true);
        return;
      }
      if (typing || e.ctrlKey || e.metaKey || e.altKey) return;
      if ((e.key === 'Delete' || e.key === 'Backspace') && state.selected) {
        e.preventDefault();
        const r = removePart(state.history.present[state.active], state.selected);
        if (r.ok) dispatch({ type: 'edit-design', design: r.design, say: `Deleted ${state.selected} (Ctrl+Z brings it back).`, select: null });
        else dispatch({ type: 'say', text: `Not done: ${r.reason}`, bad: true });
        return;
      }
      if (e.key === 'a' || e.key === 'A') dispatch({ type: 'hear', monitor: 'A' });
      else if (e.key === 'b' || e.key === 'B') dispatch({ type: 'hear', monitor: 'B' });
      else if (e.key === 'd' || e.key === 'D') dispatch({ type: 'hear', monitor: 'dry' });
      else if (e.key === ' ' && !t.closest('button, [role=button], [role=slider]')) {
        e.preventDefault();
        if (status?.playing) port.stop();
        else if (state.clip) void port.play();
      }
    };
  });
  useEffect(() => {
    const h = (e: KeyboardEvent) => keyRef.current(e);
    window.addEventListener('keydown', h);
    return () => window.removeEventListener('keydown', h);
  }, []);
}
