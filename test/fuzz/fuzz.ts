/**
 * The fuzzing run: cases [0, N) of a seed, through runner.ts in child processes, each watched for
 * hangs (no case finished within HANG_SECONDS: the child is killed, the case counts as a hang and
 * the run resumes after it) and restarted after a memory overrun. `npm test` runs 20,000 cases
 * (test/io/fuzz.test.ts); `npm run fuzz` runs 200,000 and prints the table:
 *
 *   npm run fuzz                      200,000 cases, seed 1 (entry point: test/fuzz/cli.ts)
 *   npm run fuzz -- --cases 5000 --seed 7 --jobs 2
 *   npm run fuzz -- --case 123456     one case: what was mutated, and the outcome
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import readline from 'node:readline';
import { fileURLToPath } from 'node:url';
import type { Counts, Outcome } from './runner.ts';

const here = path.dirname(fileURLToPath(import.meta.url));
/** Case files are rewritten thousands of times: in memory (tmpfs) where the machine has it. */
export const scratchRoot = fs.existsSync('/dev/shm') ? '/dev/shm' : os.tmpdir();
const root = path.resolve(here, '../..');
export const HANG_SECONDS = 20;

export interface BadCase {
  i: number;
  family: string;
  base: string;
  outcome: Outcome;
  what: string;
  detail?: string;
}

export interface FuzzReport {
  cases: number;
  counts: Counts;
  bad: BadCase[];
  seconds: number;
}

function merge(into: Counts, from: Counts): void {
  for (const [family, c] of Object.entries(from)) {
    const t = (into[family] ??= {});
    for (const [k, v] of Object.entries(c)) t[k as Outcome] = (t[k as Outcome] ?? 0) + (v ?? 0);
  }
}

/** Runs cases [from, to) in one child process at a time, resuming after hangs and memory overruns. */
async function runRange(seed: number, from: number, to: number, cliEvery: number, counts: Counts, bad: BadCase[]): Promise<void> {
  let next = from;
  while (next < to) {
    const dir = fs.mkdtempSync(path.join(scratchRoot, 'reelwright-fuzz-'));
    const child = spawn(process.execPath, ['--import', 'tsx', path.join(here, 'runner.ts'), '--seed', String(seed), '--from', String(next), '--to', String(to), '--cli-every', String(cliEvery), '--dir', dir], {
      cwd: root,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let current = next;
    let finished = false;
    let stderr = '';
    child.stderr.on('data', (d: Buffer) => (stderr = (stderr + d.toString()).slice(-4000)));
    let timer: NodeJS.Timeout | undefined;
    let hung = false;
    const arm = () => {
      clearTimeout(timer);
      timer = setTimeout(() => {
        hung = true;
        child.kill('SIGKILL');
      }, HANG_SECONDS * 1000);
    };
    arm();
    const lines = readline.createInterface({ input: child.stdout });
    for await (const line of lines) {
      const m = JSON.parse(line) as { t: string; i?: number; counts?: Counts; stoppedAt?: number } & BadCase;
      arm();
      if (m.t === 'case') current = m.i!;
      else if (m.t === 'bad') bad.push({ i: m.i, family: m.family, base: m.base, outcome: m.outcome, what: m.what, detail: m.detail });
      else if (m.t === 'summary') {
        merge(counts, m.counts!);
        finished = true;
        next = m.stoppedAt !== undefined ? m.stoppedAt + 1 : to;
      }
    }
    clearTimeout(timer);
    await new Promise<void>((resolve) => (child.exitCode !== null || child.signalCode !== null ? resolve() : child.on('close', () => resolve())));
    fs.rmSync(dir, { recursive: true, force: true });
    if (!finished) {
      // Killed by the watchdog (a hang) or died (a crash of the process itself): count the case
      // under way and resume after it. The counts of this child up to there are lost, so they
      // are rerun: resume from the case after the bad one, and rerun the ones before it.
      const outcome: Outcome = hung ? 'hang' : 'crash';
      bad.push({ i: current, family: '?', base: '?', outcome, what: 'see --case', detail: hung ? `no progress for ${HANG_SECONDS} s` : `the process exited (${child.exitCode ?? child.signalCode}): ${stderr.trim()}` });
      merge(counts, { [`process (${outcome})`]: { [outcome]: 1 } });
      if (current > next) await runRange(seed, next, current, cliEvery, counts, bad);
      next = current + 1;
    }
  }
}

export async function fuzz(options: { cases: number; seed?: number; jobs?: number; cliEvery?: number; from?: number }): Promise<FuzzReport> {
  const t0 = performance.now();
  const seed = options.seed ?? 1;
  const jobs = Math.max(1, options.jobs ?? 1);
  const from = options.from ?? 0;
  const counts: Counts = {};
  const bad: BadCase[] = [];
  const per = Math.ceil(options.cases / jobs);
  await Promise.all(Array.from({ length: jobs }, (_, j) => {
    const a = from + j * per, b = Math.min(from + options.cases, a + per);
    return a < b ? runRange(seed, a, b, options.cliEvery ?? 400, counts, bad) : Promise.resolve();
  }));
  return { cases: options.cases, counts, bad, seconds: (performance.now() - t0) / 1000 };
}

const OUTCOMES: Outcome[] = ['ok', 'refused', 'crash', 'badRefusal', 'wrongRead', 'memory', 'hang'];

export function table(r: FuzzReport): string {
  const rows = Object.entries(r.counts).sort(([a], [b]) => a.localeCompare(b));
  const head = ['family'.padEnd(24), ...OUTCOMES.map((o) => o.padStart(10)), 'total'.padStart(9)].join('');
  const line = (name: string, c: Partial<Record<Outcome, number>>) =>
    [name.padEnd(24), ...OUTCOMES.map((o) => String(c[o] ?? 0).padStart(10)), String(OUTCOMES.reduce((s, o) => s + (c[o] ?? 0), 0)).padStart(9)].join('');
  const total: Partial<Record<Outcome, number>> = {};
  for (const [, c] of rows) for (const o of OUTCOMES) total[o] = (total[o] ?? 0) + (c[o] ?? 0);
  return [head, ...rows.map(([n, c]) => line(n, c)), line('all', total)].join('\n');
}

