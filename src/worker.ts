import { createApp } from './http/app.js';

/** Cloudflare Workers entry: the Hono app is the fetch handler. */
const app = createApp();
export default app;
