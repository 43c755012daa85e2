import { createApp } from './http/app.js';

/** Cloudflare Workers entry: the Hono app is the fetch handler. */
const app = createApp();
export default app;

/** The Durable Object class behind POST /v1/stress?shards=N (binding STRESS_SHARD in wrangler.toml). */
export { StressShard } from './shard-object.js';
