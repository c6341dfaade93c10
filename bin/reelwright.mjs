#!/usr/bin/env node
// The `reelwright` command. TypeScript sources run through the tsx loader, so a fresh
// `npm install` leaves a working command with no build step.
import { register } from 'tsx/esm/api';

register();
// A closed pipe (`reelwright … | head`) is not an error.
process.stdout.on('error', (e) => {
  if (e.code === 'EPIPE') process.exit(process.exitCode ?? 0);
  throw e;
});
const { main } = await import('../main/cli/index.ts');
process.exitCode = await main(process.argv.slice(2));
