#!/usr/bin/env node
// Installed entry point: runs the built CLI (plain JavaScript in dist/, made by `npm run build`,
// which `npm ci`, `npm install` and `npm pack` run through the prepare script).
import { run } from '../dist/cli.js';

await run();
