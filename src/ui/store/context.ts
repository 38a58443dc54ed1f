// The store as seen by components: the state, dispatch, the audio port and the port's status.
import { createContext, useContext, type Dispatch } from 'react';
import type { EnginePort } from '../audio-engine-port.ts';
import type { AudioStatus } from '../audio-port.ts';
import type { Action, WorkspaceState } from './workspace-store.ts';

export interface Workspace {
  readonly state: WorkspaceState;
  readonly dispatch: Dispatch<Action>;
  readonly port: EnginePort;
  readonly status: AudioStatus | null;
}

export const WorkspaceContext = createContext<Workspace | null>(null);

export function useWorkspace(): Workspace {
  const w = useContext(WorkspaceContext);
  if (!w) throw new Error('useWorkspace outside the workspace');
  return w;
}
