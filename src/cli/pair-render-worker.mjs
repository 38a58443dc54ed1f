// Worker-thread entry: load tsx so the TypeScript worker module can run, then hand over.
import { register } from 'tsx/esm/api';

register();
await import('./pair-render-worker.ts');
