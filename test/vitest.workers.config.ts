import { cloudflareTest } from '@cloudflare/vitest-pool-workers';
import { defineConfig } from 'vitest/config';

// Tests that run inside the real Workers runtime (workerd), against wrangler.toml's Worker
// (with its [[ratelimits]] binding). TIGHT_RATE_LIMITER is a second rate-limiting binding with a
// tiny limit, which the tests hand to the app in place of the deployed one to see a 429.
export default defineConfig({
  plugins: [
    cloudflareTest({
      wrangler: { configPath: './wrangler.toml' },
      miniflare: { ratelimits: { TIGHT_RATE_LIMITER: { simple: { limit: 2, period: 60 } } } },
    }),
  ],
  test: {
    root: new URL('..', import.meta.url).pathname,
    include: ['test/worker/**/*.test.ts'],
    testTimeout: 120_000,
  },
});
