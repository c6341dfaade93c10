/**
 * Start-up of the command line, the cost paid by every call in a shell loop over thousands of
 * files: medians of whole runs beside bare `node -e 0`, for the built command line (build/cli,
 * made by `npm install`) and for the same sources run through the TypeScript loader (tsx), as
 * `reelwright` ran before it was built. Targets: `--version` ≤ 0.2 s, `info` on the demo ≤ 0.5 s.
 * Uses hyperfine when it is installed (warm-up 3, 20 runs), else its own loop (20 runs).
 * Also the start of one `check` process (until it reports ready), built and through tsx.
 */
import { fork, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { outDir } from '../bin/build-cli.mjs';
import { CHECK_PROCESS_FLAGS } from '../main/check/thread.ts';
import { ensureFreshCli, fmt, line } from './util.ts';

const root = path.resolve(import.meta.dirname, '..');
const demo = 'assets/demo/thornbury-reel7.wav';
const RUNS = 20;
const fromSource = (args: string[]) => [
  process.execPath, '--import', 'tsx', '--input-type=module', '-e',
  "const { main } = await import('./main/cli/index.ts'); process.exitCode = await main(process.argv.slice(1));", '--', ...args,
];

const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2]! : (s[s.length / 2 - 1]! + s[s.length / 2]!) / 2;
};

function hasHyperfine(): boolean {
  return spawnSync('hyperfine', ['--version'], { stdio: 'ignore' }).status === 0;
}

/** Median wall-clock seconds and mean user+system CPU seconds (NaN without hyperfine) of a command. */
function timeCommand(argv: string[]): { median: number; cpu: number } {
  if (hasHyperfine()) {
    const json = path.join(os.tmpdir(), `reelwright-hyperfine-${process.pid}.json`);
    const quoted = argv.map((a) => `'${a.replace(/'/g, `'\\''`)}'`).join(' ');
    const r = spawnSync('hyperfine', ['-N', '-w', '3', '-r', String(RUNS), '--export-json', json, quoted], { cwd: root, encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`hyperfine failed: ${r.stderr}`);
    const res = JSON.parse(fs.readFileSync(json, 'utf8')).results[0];
    fs.rmSync(json, { force: true });
    return { median: res.median, cpu: res.user + res.system };
  }
  const walls: number[] = [];
  const cpu = NaN;
  for (let i = 0; i < RUNS + 3; i++) {
    const t = process.hrtime.bigint();
    const r = spawnSync(argv[0]!, argv.slice(1), { cwd: root, stdio: 'ignore' });
    if (r.status !== 0) throw new Error(`${argv.join(' ')} exited with ${r.status}`);
    if (i >= 3) walls.push(Number(process.hrtime.bigint() - t) / 1e9);
  }
  return { median: median(walls), cpu };
}

/** Median seconds until a check process (started as main/check/thread.ts starts it) posts its first message ('ready'). */
async function workerStart(entry: URL, runs = 7): Promise<number> {
  const times: number[] = [];
  for (let i = 0; i < runs; i++) {
    const t = performance.now();
    const child = fork(fileURLToPath(entry), [], { execArgv: [...CHECK_PROCESS_FLAGS], serialization: 'advanced', stdio: ['ignore', 'inherit', 'inherit', 'ipc'] });
    await new Promise<void>((resolve, reject) => {
      child.once('message', () => resolve());
      child.once('error', reject);
      child.once('exit', (code) => reject(new Error(`the check process exited (${code})`)));
    });
    times.push((performance.now() - t) / 1000);
    const gone = new Promise((r) => child.once('exit', r));
    child.kill('SIGKILL');
    await gone;
  }
  return median(times);
}

export default async function bench(): Promise<void> {
  await ensureFreshCli({ clean: true });
  const bin = [process.execPath, 'bin/reelwright.mjs'];
  const bare = timeCommand([process.execPath, '-e', '0']);
  // CPU time (user + system) is printed too: on a loaded machine it stays put while wall time grows.
  line('startup', 'bare node -e 0 (median)', `${fmt(bare.median, 3)} s`, `CPU ${fmt(bare.cpu, 3)} s; load average ${os.loadavg()[0]!.toFixed(1)} on ${os.cpus().length} cores`);
  for (const [what, args, target] of [['--version', ['--version'], 0.2], ['info (demo)', ['info', demo], 0.5]] as const) {
    const built = timeCommand([...bin, ...args]);
    const tsx = timeCommand(fromSource([...args]));
    const ok = built.median <= target ? 'target met' : 'TARGET MISSED';
    line('startup', `reelwright ${what}, built (median)`, `${fmt(built.median, 3)} s`, `${ok} (≤ ${target} s); ${fmt(built.median - bare.median, 3)} s over bare node; CPU ${fmt(built.cpu, 3)} s`);
    line('startup', `reelwright ${what}, tsx (median)`, `${fmt(tsx.median, 3)} s`, `${fmt(tsx.median / built.median, 1)}× the built time; CPU ${fmt(tsx.cpu, 3)} s`);
  }
  const builtWorker = await workerStart(new URL(`file://${path.join(outDir, 'worker-entry.mjs')}`));
  const tsxWorker = await workerStart(new URL('../main/check/worker-entry.mjs', import.meta.url));
  line('startup', 'check process until ready, built (median)', `${fmt(builtWorker, 3)} s`);
  line('startup', 'check process until ready, tsx (median)', `${fmt(tsxWorker, 3)} s`);
}
