// ELK (elkjs) for the workspace, run in its own worker so a large layout never holds up the page;
// the worker script is elkjs's own, loaded on the first layout.
import type { ElkNode } from 'elkjs/lib/elk-api.js';
import elkWorkerUrl from 'elkjs/lib/elk-worker.min.js?url';
import type { ElkLayout } from './model/sheet-layout.ts';

let elk: Promise<ElkLayout> | null = null;

export function workerElk(): Promise<ElkLayout> {
  elk ??= import('elkjs/lib/elk-api.js').then(({ default: ELK }) => {
    const e = new ELK({ workerFactory: () => new Worker(elkWorkerUrl) });
    return (g: ElkNode) => e.layout(g);
  });
  return elk;
}
