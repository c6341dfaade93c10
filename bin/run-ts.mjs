#!/usr/bin/env node
// Runs a TypeScript entry point through the tsx loader (no build step needed).
import { register } from 'tsx/esm/api';
import { pathToFileURL } from 'node:url';
import path from 'node:path';

register();
const entry = process.argv[2];
if (!entry) {
  process.stderr.write('usage: node bin/run-ts.mjs FILE.ts [args…]\n');
  process.exit(2);
}
process.argv.splice(2, 1);
await import(pathToFileURL(path.resolve(entry)).href);
