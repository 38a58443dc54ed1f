// One analysis worker per panel: run a request, follow its progress, cancel it.
import { useCallback, useEffect, useRef, useState } from 'react';
import type { AnalysisReply, AnalysisRequest, AnalysisResult } from '../analysis-protocol.ts';

type Request = AnalysisRequest extends infer R ? (R extends { id: number } ? Omit<R, 'id'> : never) : never;

export interface Analysis {
  readonly busy: boolean;
  readonly fraction: number;
  run(req: Request, transfer?: Transferable[]): Promise<AnalysisResult>;
  cancel(): void;
}

export function useAnalysis(): Analysis {
  const worker = useRef<Worker | null>(null);
  const pending = useRef<{ id: number; reject: (e: Error) => void } | null>(null);
  const nextId = useRef(0);
  const [busy, setBusy] = useState(false);
  const [fraction, setFraction] = useState(0);
  const stop = useCallback(() => {
    worker.current?.terminate();
    worker.current = null;
    pending.current?.reject(new Error('cancelled'));
    pending.current = null;
    setBusy(false);
  }, []);
  useEffect(() => stop, [stop]);
  const run = useCallback(
    (req: Request, transfer: Transferable[] = []) => {
      if (pending.current) stop();
      const w = worker.current ?? new Worker(new URL('../analysis.worker.ts', import.meta.url), { type: 'module' });
      worker.current = w;
      const id = ++nextId.current;
      setBusy(true);
      setFraction(0);
      return new Promise<AnalysisResult>((resolve, reject) => {
        pending.current = { id, reject };
        w.onmessage = (ev: MessageEvent<AnalysisReply>) => {
          const m = ev.data;
          if (m.id !== id) return;
          if (m.type === 'progress') {
            setFraction(m.fraction);
            return;
          }
          pending.current = null;
          setBusy(false);
          if (m.type === 'done') resolve(m.result);
          else reject(new Error(m.reason));
        };
        w.onerror = (ev) => {
          pending.current = null;
          setBusy(false);
          worker.current = null;
          w.terminate();
          reject(new Error(ev.message || 'the analysis worker failed to start'));
        };
        w.postMessage({ ...req, id }, transfer);
      });
    },
    [stop],
  );
  return { busy, fraction, run, cancel: stop };
}
