/** Helpers for the benches: timing, memory, and running the same work in numpy/scipy. */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import { buildCli, isFresh, manifestPath } from '../bin/build-cli.mjs';

export function timeIt(fn: () => void, minSeconds = 1): { seconds: number; runs: number } {
  fn(); // warm-up
  let runs = 0;
  const t0 = process.hrtime.bigint();
  let elapsed = 0;
  do {
    fn();
    runs++;
    elapsed = Number(process.hrtime.bigint() - t0) / 1e9;
  } while (elapsed < minSeconds);
  return { seconds: elapsed / runs, runs };
}

export async function timeAsync(fn: () => Promise<void>): Promise<number> {
  const t0 = process.hrtime.bigint();
  await fn();
  return Number(process.hrtime.bigint() - t0) / 1e9;
}

/** Runs a Python snippet that prints one JSON object; null when python3/scipy is unavailable. */
export function python(code: string): Record<string, number | string> | null {
  const r = spawnSync('python3', ['-c', code], { encoding: 'utf8', maxBuffer: 1 << 20 });
  if (r.status !== 0) {
    if (process.env.REELWRIGHT_DEBUG) process.stderr.write(r.stderr);
    return null;
  }
  try {
    return JSON.parse(r.stdout.trim().split('\n').pop()!);
  } catch {
    return null;
  }
}

export const fmt = (v: number, digits = 2) => (Number.isFinite(v) ? v.toFixed(digits) : '—');

export function line(area: string, what: string, value: string, extra = ''): void {
  process.stdout.write(`${area.padEnd(9)} ${what.padEnd(52)} ${value.padStart(14)}${extra ? '  ' + extra : ''}\n`);
}

export const mb = (bytes: number) => `${(bytes / 1048576).toFixed(0)} MB`;

/** CPU seconds (user + system) so far of a process and its threads, or of its main thread alone, from /proc. */
export function cpuOf(pid: number, mainThreadOnly = false): number {
  try {
    const f = fs.readFileSync(mainThreadOnly ? `/proc/${pid}/task/${pid}/stat` : `/proc/${pid}/stat`, 'utf8').split(') ')[1]!.split(' ');
    return (Number(f[11]) + Number(f[12])) / 100; // utime, stime in clock ticks (100 Hz on Linux)
  } catch {
    return NaN;
  }
}

/** The running child processes of `pid` (the check processes of a worker), from /proc. */
export function childrenOf(pid: number): number[] {
  const out: number[] = [];
  for (const d of fs.readdirSync('/proc')) {
    if (!/^\d+$/.test(d)) continue;
    try {
      const f = fs.readFileSync(`/proc/${d}/stat`, 'utf8').split(') ')[1]!.split(' ');
      if (Number(f[1]) === pid) out.push(Number(d));
    } catch {
      /* gone meanwhile */
    }
  }
  return out;
}

/** A process's resident set now and its peak so far (VmRSS, VmHWM in kB), from /proc; null once it has gone (NaN fields for a zombie). */
export function rssOf(pid: number): { rssKb: number; peakKb: number } | null {
  try {
    const s = fs.readFileSync(`/proc/${pid}/status`, 'utf8');
    const kb = (k: string) => Number(new RegExp(`^${k}:\\s+(\\d+) kB`, 'm').exec(s)?.[1] ?? NaN);
    return { rssKb: kb('VmRSS'), peakKb: kb('VmHWM') };
  } catch {
    return null;
  }
}

/**
 * Follows a process and every process below it (sampling /proc every `everyMs`) and keeps, per
 * process, its peak resident set. `sumOfPeaksKb` adds those peaks: an upper bound of the memory the
 * whole tree held at once (the processes may not peak together); `largestTotalKb` is the largest
 * sampled total of the current resident sets, a lower bound.
 */
export function watchTree(rootPid: number, everyMs = 100): { stop(): { sumOfPeaksKb: number; largestTotalKb: number; processes: number; peaks: { name: string; peakKb: number }[] } } {
  const peaks = new Map<number, number>();
  const names = new Map<number, string>();
  let largestTotalKb = 0;
  const sample = () => {
    const pids = [rootPid];
    for (let i = 0; i < pids.length; i++) pids.push(...childrenOf(pids[i]!));
    let total = 0;
    for (const pid of pids) {
      const r = rssOf(pid);
      if (!r || !Number.isFinite(r.rssKb) || !Number.isFinite(r.peakKb)) continue; // gone, or a zombie (no Vm lines)
      total += r.rssKb;
      peaks.set(pid, Math.max(peaks.get(pid) ?? 0, r.peakKb));
      if (!names.has(pid)) names.set(pid, nameOf(pid));
    }
    largestTotalKb = Math.max(largestTotalKb, total);
  };
  sample();
  const timer = setInterval(sample, everyMs);
  return {
    stop() {
      clearInterval(timer);
      let sum = 0;
      for (const v of peaks.values()) sum += v;
      return { sumOfPeaksKb: sum, largestTotalKb, processes: peaks.size, peaks: [...peaks].map(([pid, peakKb]) => ({ name: names.get(pid) ?? '?', peakKb })) };
    },
  };
}

/** A short name for a process: its program and the last path part of its first script argument. */
function nameOf(pid: number): string {
  try {
    const argv = fs.readFileSync(`/proc/${pid}/cmdline`, 'utf8').split('\0').filter(Boolean);
    const script = argv.slice(1).find((a) => !a.startsWith('-'));
    return [argv[0]?.split('/').pop(), script?.split('/').pop()].filter(Boolean).join(' ');
  } catch {
    return '?';
  }
}

/**
 * Rebuilds the command line's JavaScript build when it is missing or older than its sources, so a
 * bench that times `bin/reelwright.mjs` does not time (or count the memory of) the rebuild.
 */
export async function ensureFreshCli(options: { clean: boolean }): Promise<void> {
  let fresh = false;
  try {
    fresh = isFresh(JSON.parse(fs.readFileSync(manifestPath, 'utf8')));
  } catch {
    // not built yet
  }
  if (!fresh) await buildCli({ clean: options.clean, quiet: true });
}
