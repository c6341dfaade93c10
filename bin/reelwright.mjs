#!/usr/bin/env node
// The `reelwright` command. Runs the JavaScript build of the command line in build/cli/, which
// `npm install` makes (bin/build-cli.mjs, the `prepare` script). When a source listed in the
// build's manifest has changed since (a development checkout), it is rebuilt first (about 0.3 s).
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { buildCli, isFresh, manifestPath, outDir, root } from './build-cli.mjs';

let manifest = null;
try {
  manifest = JSON.parse(fs.readFileSync(manifestPath, 'utf8'));
} catch {
  // not built yet
}
if (!manifest || !isFresh(manifest)) {
  try {
    manifest = await buildCli({ clean: false, quiet: true });
  } catch (e) {
    const why = e?.message?.split('\n')[0] ?? String(e);
    if (!manifest) {
      process.stderr.write(`reelwright: the command line is not built and could not be built (${why}); run \`npm install\` in ${root}\n`);
      process.exit(2);
    }
    // A read-only install, say: run the earlier build, and say so.
    process.stderr.write(`reelwright: warning: sources changed since the build but it could not be rebuilt (${why}); running the earlier build\n`);
  }
}
if (process.env.REELWRIGHT_DEBUG) process.setSourceMapsEnabled(true);
// A closed pipe (`reelwright … | head`) is not an error.
process.stdout.on('error', (e) => {
  if (e.code === 'EPIPE') process.exit(process.exitCode ?? 0);
  throw e;
});
const { main } = await import(pathToFileURL(path.join(outDir, manifest.entry)).href);
process.exitCode = await main(process.argv.slice(2));
