import { cloudflareTest } from '@cloudflare/vitest-pool-workers';
import { defineConfig } from 'vitest/config';

// Tests that run inside the real Workers runtime (workerd), against wrangler.toml's Worker.
export default defineConfig({
  plugins: [cloudflareTest({ wrangler: { configPath: './wrangler.toml' } })],
  test: {
    root: new URL('..', import.meta.url).pathname,
    include: ['test/worker/**/*.test.ts'],
    testTimeout: 120_000,
  },
});
