#!/usr/bin/env node
// Thin launcher: the TypeScript sources are compiled to dist/ by `npm ci` (the prepare script).
import { main } from '../dist/runner/cli.js';

main(process.argv.slice(2)).then((code) => {
  process.exitCode = code;
});
