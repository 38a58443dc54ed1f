import { defineConfig } from 'vite';
import react from '@vitejs/plugin-react';

export default defineConfig({
  plugins: [react()],
  // AudioWorklet and Worker modules are bundled as ES modules (worklets/*.worklet.ts?worker&url).
  worker: { format: 'es' },
  // Pre-bundle Tone.js up front so a dev server never reloads the page to add it.
  optimizeDeps: { include: ['tone'] },
  server: { host: '127.0.0.1' },
  build: { target: 'es2022' },
});
