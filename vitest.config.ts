import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    environment: 'node',
    testTimeout: 60_000,
    hookTimeout: 120_000,
    pool: 'forks',
    // expect.poll waits on page and engine state instead of fixed sleeps; on a loaded 2-core
    // machine a state change can take seconds, so poll for up to 20 s (vitest's default is 1 s)
    expect: { poll: { timeout: 20_000, interval: 50 } },
  },
});
