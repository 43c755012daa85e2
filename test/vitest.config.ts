import { defineConfig } from 'vitest/config';

// Node-side tests: unit, reference (outside checks), HTTP via app.request, CLI.
// Workers-runtime tests live under test/worker and run with test/vitest.workers.config.ts.
export default defineConfig({
  test: {
    root: new URL('..', import.meta.url).pathname,
    include: ['test/**/*.test.ts'],
    exclude: ['test/worker/**', 'node_modules/**'],
    setupFiles: ['test/setup.ts'],
    testTimeout: 60_000,
    pool: 'forks',
  },
});
