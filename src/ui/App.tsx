// The audition workspace: one store (store/workspace-store.ts) mirrored into the audio port, and
// the panels that read it: header, circuit, part editor and operating point, listen, analyses, see.
import { useEffect, useMemo, useReducer, useRef, useState, type ReactElement } from 'react';
import { EnginePort } from './audio-engine-port.ts';
import type { AudioStatus } from './audio-port.ts';
import { CAUTION_KEY, STORAGE_KEY, parseWorkspace, serializeWorkspace } from './model/storage.ts';
import { decodeDesignHash } from './model/share.ts';
import { CautionDialog } from './Cautions.tsx';
import { TopBar } from './TopBar.tsx';
import { CircuitPanel } from './panels/CircuitPanel.tsx';
import { BenchSide, useBench } from './panels/BenchSide.tsx';
import { ListenPanel } from './panels/ListenPanel.tsx';
import { SeePanel } from './panels/SeePanel.tsx';
import { AnalysesPanel } from './panels/AnalysesPanel.tsx';
import { TransportBar } from './panels/TransportBar.tsx';
import { useStartLive } from './panels/LiveControls.tsx';
import { WorkspaceContext, useWorkspace, type Workspace } from './store/context.ts';
import { useKeys } from './store/keys.ts';
import { useFileActions } from './store/actions.ts';
import { initialState, portSettings, reducer, syncPort, type PortSettings } from './store/workspace-store.ts';

function loadInitial() {
  const saved = typeof localStorage !== 'undefined' ? parseWorkspace(localStorage.getItem(STORAGE_KEY)) : null;
  const cautionRead = typeof localStorage !== 'undefined' && localStorage.getItem(CAUTION_KEY) !== null;
  return initialState(saved, cautionRead);
}

export function App(): ReactElement {
  const port = useMemo(() => new EnginePort(), []);
  const [state, dispatch] = useReducer(reducer, undefined, loadInitial);
  const [status, setStatus] = useState<AudioStatus | null>(null);
  useEffect(() => port.subscribe(setStatus), [port]);
  const workspace: Workspace = useMemo(() => ({ state, dispatch, port, status }), [state, port, status]);

  // the store, mirrored into the port: only what changed is sent
  const synced = useRef<PortSettings | null>(null);
  useEffect(() => {
    const next = portSettings(state);
    syncPort(port, synced.current, next);
    synced.current = next;
  }, [port, state]);
  const { history, active } = state;
  useEffect(() => {
    localStorage.setItem(STORAGE_KEY, serializeWorkspace({ slots: history.present, active }));
  }, [history.present, active]);

  // a shared link in the hash wins over the autosave (into slot A, undoable)
  useEffect(() => {
    void decodeDesignHash(location.hash).then((r) => {
      if (r.ok === true) dispatch({ type: 'load-slot', slot: 'A', design: r.design, say: `Opened the shared design "${r.design.name}" in slot A.` });
      else if (r.ok === false) dispatch({ type: 'say', text: `${r.reason} — kept your current design.`, bad: true });
    });
  }, []);

  // the processor muted live input for safety: say so where it cannot be missed
  const safetyNote = status?.safetyNote ?? null;
  useEffect(() => {
    if (safetyNote) dispatch({ type: 'say', text: safetyNote, bad: true });
  }, [safetyNote]);
  // the port lowered the quality itself (sustained overload): follow it and say why
  const qualityNote = status?.qualityNote ?? null;
  const loweredTo = status?.qualityFactor;
  useEffect(() => {
    if (qualityNote === null || loweredTo === undefined) return;
    dispatch({ type: 'quality', factor: loweredTo });
    dispatch({ type: 'say', text: qualityNote });
  }, [qualityNote, loweredTo]);

  // test hook: only in development builds or a page opened with ?vw-test (the browser tests)
  useEffect(() => {
    if (!import.meta.env.DEV && !new URLSearchParams(location.search).has('vw-test')) return;
    const w = window as unknown as Record<string, unknown>;
    w.__valvewright = { port, slots: () => history.present, active: () => active };
  });

  return (
    <WorkspaceContext.Provider value={workspace}>
      <Shell />
    </WorkspaceContext.Provider>
  );
}

function Shell(): ReactElement {
  const { state, dispatch } = useWorkspace();
  const { openDesignFile, openAudioFile } = useFileActions();
  const startLive = useStartLive();
  const bench = useBench();
  const [dragging, setDragging] = useState(false);
  useKeys();
  const onDropFiles = (files: FileList) => {
    const f = files[0];
    if (!f) return;
    if (f.name.toLowerCase().endsWith('.json')) void openDesignFile(f);
    else void openAudioFile(f);
  };
  const { message, caution, tab } = state;
  return (
    <div
      className={`app${dragging ? ' dragging' : ''}`}
      onDragOver={(e) => {
        e.preventDefault();
        setDragging(true);
      }}
      onDragLeave={(e) => {
        if (e.currentTarget === e.target) setDragging(false);
      }}
      onDrop={(e) => {
        e.preventDefault();
        setDragging(false);
        onDropFiles(e.dataTransfer.files);
      }}
    >
      <TopBar />
      {message && (
        <p className={`banner${message.bad ? ' bad' : ''}`} role={message.bad ? 'alert' : 'status'} data-testid="message">
          {message.text}{' '}
          {message.action && (
            <button type="button" onClick={message.action.run} data-testid="message-action">
              {message.action.label}
            </button>
          )}{' '}
          <button type="button" className="link" onClick={() => dispatch({ type: 'dismiss' })} aria-label="Dismiss message">
            ×
          </button>
        </p>
      )}
      <main className="grid">
        <CircuitPanel findings={bench.findings} />
        <BenchSide bench={bench} />
        <div className="lower">
          <div className="tabs" role="tablist" aria-label="Panels">
            {(['listen', 'analyses', 'see'] as const).map((t) => (
              <button key={t} type="button" role="tab" aria-selected={tab === t} aria-controls={`tab-${t}`} onClick={() => dispatch({ type: 'tab', tab: t })}>
                {TAB_NAMES[t]}
              </button>
            ))}
          </div>
          <div id="tab-listen" role="tabpanel" hidden={tab !== 'listen'}>
            <ListenPanel />
          </div>
          <div id="tab-analyses" role="tabpanel" hidden={tab !== 'analyses'}>
            <AnalysesPanel />
          </div>
          <div id="tab-see" role="tabpanel" hidden={tab !== 'see'}>
            <SeePanel />
          </div>
        </div>
      </main>
      <TransportBar />
      <footer className="keys fine">
        Keys: A / B / D switch what you hear · Space play or stop · M mute live input · Ctrl+Z undo · Ctrl+Shift+Z redo · Delete removes the selected part ·
        Alt+arrows nudge it
      </footer>
      {caution && (
        <CautionDialog
          kind={caution}
          onAccept={() => {
            if (caution === 'first-run') localStorage.setItem(CAUTION_KEY, '1');
            else void startLive();
            dispatch({ type: 'caution', kind: null });
          }}
          onCancel={caution === 'live' ? () => dispatch({ type: 'caution', kind: null }) : undefined}
        />
      )}
    </div>
  );
}

const TAB_NAMES = { listen: 'Listen', analyses: 'Analyses', see: 'See' } as const;
