/**
 * `npm run bench`: runs every bench/*.bench.ts in turn (or only those whose name contains an
 * argument: `npm run bench -- speed`). Each prints its own lines: throughput, memory, and the ratio
 * against the same work in numpy/scipy (higher is better for us).
 */
import { readdirSync } from 'node:fs';
import os from 'node:os';
import { pathToFileURL } from 'node:url';
import path from 'node:path';

const here = path.dirname(new URL(import.meta.url).pathname);
const filters = process.argv.slice(2);
const files = readdirSync(here)
  .filter((f) => f.endsWith('.bench.ts'))
  .filter((f) => filters.length === 0 || filters.some((x) => f.includes(x)))
  .sort();

process.stdout.write(
  `Reelwright bench — node ${process.version}, ${os.cpus().length} × ${os.cpus()[0]?.model ?? 'cpu'}, ${(os.totalmem() / 2 ** 30).toFixed(0)} GiB\n`,
);
for (const f of files) {
  const mod = (await import(pathToFileURL(path.join(here, f)).href)) as { default: () => Promise<void> };
  process.stdout.write(`\n== ${f.replace('.bench.ts', '')}\n`);
  await mod.default();
}
