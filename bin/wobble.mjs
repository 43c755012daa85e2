#!/usr/bin/env node
// Installed entry point: runs the TypeScript CLI through tsx's loader.
import { register } from 'tsx/esm/api';
register();
const { run } = await import('../src/cli/main.ts');
await run();
