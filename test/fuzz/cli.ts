/** `npm run fuzz`: see fuzz.ts. */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fuzz, table } from './fuzz.ts';

const arg = (name: string, fallback: number) => {
  const i = process.argv.indexOf(`--${name}`);
  return i > 0 ? Number(process.argv[i + 1]) : fallback;
};
const one = arg('case', -1);
if (one >= 0) {
  const { buildSeeds, mutate } = await import('./corpus.ts');
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-fuzz-'));
  const m = mutate(await buildSeeds(dir), arg('seed', 1), one);
  const file = path.join(dir, `case-${one}-${m.base.name}`);
  fs.writeFileSync(file, m.bytes);
  process.stdout.write(`case ${one}: ${m.base.name}: ${m.what}\nwritten to ${file}\n`);
  const r = await fuzz({ cases: 1, seed: arg('seed', 1), from: one, cliEvery: 0 });
  process.stdout.write(`${table(r)}\n${r.bad.map((b) => `${b.outcome}: ${b.detail}`).join('\n')}\n`);
} else {
  const cases = arg('cases', 200_000);
  const r = await fuzz({ cases, seed: arg('seed', 1), jobs: arg('jobs', Math.max(1, Math.min(4, os.cpus().length))), cliEvery: arg('cli-every', 400) });
  process.stdout.write(`fuzz: ${cases} cases, seed ${arg('seed', 1)}, ${r.seconds.toFixed(0)} s\n${table(r)}\n`);
  for (const b of r.bad.slice(0, 40)) process.stdout.write(`\ncase ${b.i} (${b.base}, ${b.family}): ${b.outcome}: ${b.what}\n  ${b.detail?.replace(/\n/g, '\n  ')}\n`);
  process.exitCode = r.bad.length === 0 ? 0 : 1;
}

