#!/usr/bin/env node
// Thin launcher: the TypeScript sources are compiled to dist/ by `npm ci` (the prepare script).
// On Linux the heavy commands start once more with glibc allocator settings (runner/launch.ts).
import { fileURLToPath } from 'node:url';
import { allocatorEnvironment, relaunch } from '../dist/runner/launch.js';

const args = process.argv.slice(2);
const tuned = allocatorEnvironment(args, process.env, process.platform);
if (tuned) relaunch(fileURLToPath(import.meta.url), args, tuned);
else {
  const { main } = await import('../dist/runner/cli.js');
  process.exitCode = await main(args);
}
