/**
 * `reelwright check` on one long 96 kHz 24-bit stereo file: wall time and peak memory of the whole
 * command (one worker thread, pinned to one core when `taskset` exists) — wall and CPU time, since
 * on a shared machine the wall time mostly measures the other work — plus the time of each analysis
 * run on its own (each includes its own decoding pass; inside `check` they share one).
 * Target (issue 11): 1 hour, measured, in ≤ 90 s on one core with peak RSS ≤ 300 MB.
 *
 * The file is generated here in a temp folder and removed afterwards: 1 hour with REELWRIGHT_BIG=1,
 * otherwise 5 minutes, with the hour extrapolated (time × 12; memory is not extrapolated — the
 * analyses keep compact summaries, but their size does grow with length) and labelled as such.
 * Content: a 30 s 3150 Hz test tone with slight flutter, then noise "programme" tilted by a
 * one-pole low-pass, with a slow level swell and channel 2 two samples late.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { spawn, spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { writeAudio } from '../main/io/writer.ts';
import { openAudio } from '../main/io/reader.ts';
import { analyses } from '../dsp/ops/registry.ts';
import { validateParams } from '../dsp/ops/params.ts';
import { silentContext } from '../dsp/ops/types.ts';
import { NotFoundError } from '../dsp/errors.ts';
import { ensureFreshCli, fmt, line, mb, timeAsync, watchTree } from './util.ts';

const FS = 96000;
const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

/** The bench material: a test tone, then tilted noise "programme" (see the header). Also used by queue.bench.ts. */
export async function makeFile(file: string, seconds: number): Promise<void> {
  const frames = Math.round(seconds * FS);
  const block = 65536;
  let seed = 12345;
  // xorshift32 uniform noise; cheap enough to make an hour in seconds.
  const rnd = () => {
    seed ^= seed << 13;
    seed ^= seed >>> 17;
    seed ^= seed << 5;
    return (seed >>> 0) / 4294967296 - 0.5;
  };
  let lp = 0, prev1 = 0, prev2 = 0;
  async function* blocks() {
    for (let at = 0; at < frames; at += block) {
      const n = Math.min(block, frames - at);
      const a = new Float64Array(n), b = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        const t = (at + i) / FS;
        let v: number;
        if (t < 30) {
          v = 0.25 * Math.sin(2 * Math.PI * 3150 * t + ((0.0008 * 3150) / 5) * Math.sin(2 * Math.PI * 5 * t));
        } else {
          lp = 0.9 * lp + 0.1 * (rnd() + rnd() + rnd());
          v = lp * (0.6 + 0.4 * Math.sin((2 * Math.PI * t) / 97));
        }
        a[i] = v;
        b[i] = prev2;
        prev2 = prev1;
        prev1 = v;
      }
      yield [a, b];
    }
  }
  await writeAudio(file, { sampleRateHz: FS, channelCount: 2, blocks: blocks() }, { bitsPerSample: 24, sampleFormat: 'int', dither: false });
}

export default async function run(): Promise<void> {
  const big = process.env.REELWRIGHT_BIG === '1';
  const seconds = big ? 3600 : 300;
  const scale = 3600 / seconds;
  const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-bench-check-'));
  try {
    const file = path.join(tmp, 'transfer.wav');
    const made = await timeAsync(() => makeFile(file, seconds));
    line('check', `made ${seconds / 60} min 96 kHz 24-bit stereo WAV`, `${fmt(made, 1)} s`, mb(fs.statSync(file).size));

    // The command a user runs (`reelwright check`, the JavaScript build, as installed), in a shell
    // that reports its children's CPU once they have ended (cutime + cstime of /proc/$$/stat: the
    // command and the check process it waits for). Peak memory follows the whole process tree.
    // A development checkout whose sources changed since the build would rebuild it inside the
    // timed command (esbuild's ~90 MB counted in the peak): rebuild first, outside the measurement.
    await ensureFreshCli({ clean: false });
    const cmd = [process.execPath, path.join(ROOT, 'bin/reelwright.mjs'), 'check', file, '--jobs', '1', '--quiet', '--json', path.join(tmp, 'r.json')];
    const shell = `${cmd.map((a) => `'${a}'`).join(' ')} >/dev/null; code=$?; echo "$code $(cut -d')' -f2 /proc/$$/stat)"`;
    const pin = spawnSync('taskset', ['-c', '0', 'true']).status === 0;
    const [exe, exeArgs]: [string, string[]] = pin ? ['taskset', ['-c', '0', 'bash', '-c', shell]] : ['bash', ['-c', shell]];
    const t0 = process.hrtime.bigint();
    const r = await new Promise<{ status: number | null; stdout: string; stderr: string; memory: ReturnType<ReturnType<typeof watchTree>['stop']> }>((resolve) => {
      const child = spawn(exe, exeArgs, { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
      const watch = watchTree(child.pid!);
      let stdout = '';
      let stderr = '';
      child.stdout.on('data', (d) => (stdout += d));
      child.stderr.on('data', (d) => (stderr += d));
      child.on('close', (status) => resolve({ status, stdout, stderr, memory: watch.stop() }));
    });
    const wallSeconds = Number(process.hrtime.bigint() - t0) / 1e9;
    const fields = r.stdout.trim().split('\n').pop()!.trim().split(/\s+/); // code, then stat fields from the state on
    const code = Number(fields[0]);
    if (r.status !== 0 || !(code === 0 || code === 1)) {
      line('check', 'check run failed', '—', `exit ${code}: ${r.stderr.split('\n').slice(-3).join(' ')}`);
      return;
    }
    // After ") ": state ppid pgrp session tty tpgid flags minflt cminflt majflt cmajflt utime stime cutime cstime
    const cpuSeconds = (Number(fields[14]) + Number(fields[15]) + Number(fields[12]) + Number(fields[13])) / 100;
    const res = { code, seconds: wallSeconds, cpuSeconds, maxRssKb: r.memory.sumOfPeaksKb };
    const label = pin ? 'one core (taskset -c 0), --jobs 1' : '--jobs 1 (taskset not available)';
    line('check', `check ${seconds / 60} min file, ${label}`, `${fmt(res.seconds, 1)} s`, `CPU ${fmt(res.cpuSeconds, 1)} s, peak RSS ${fmt(res.maxRssKb / 1024, 0)} MB (sum of the ${r.memory.processes} processes' peaks; largest sampled total ${fmt(r.memory.largestTotalKb / 1024, 0)} MB), exit ${res.code}`);
    line('check', '  peak RSS by process', '', r.memory.peaks.map((p) => `${p.name} ${fmt(p.peakKb / 1024, 0)} MB`).join('; '));
    const load = os.loadavg()[0]!;
    const verdict = (v: number, limit: number) => (v <= limit ? 'met' : 'NOT met');
    if (big) {
      line('check', '1 hour, target ≤ 90 s on one core: CPU time', `${fmt(res.cpuSeconds, 1)} s`, verdict(res.cpuSeconds, 90));
      line('check', '1 hour, target ≤ 90 s on one core: wall time', `${fmt(res.seconds, 1)} s`, `${verdict(res.seconds, 90)} (load average ${fmt(load, 1)} on ${os.cpus().length} cores while measuring)`);
      line('check', '1 hour, target peak RSS ≤ 300 MB', `${fmt(res.maxRssKb / 1024, 0)} MB`, verdict(res.maxRssKb / 1024, 300));
    } else {
      line('check', '1 hour EXTRAPOLATED (× 12 from 5 min; REELWRIGHT_BIG=1 measures it)', `${fmt(res.seconds * scale, 0)} s`, `CPU ${fmt(res.cpuSeconds * scale, 0)} s; target ≤ 90 s. Over-estimates: the test tone, and the capped sparse frames of azimuth, flutter and the levels spectrum, do not grow with length (load average ${fmt(load, 1)})`);
    }

    // Each analysis on its own (in this process), for the breakdown.
    const audio = await openAudio(file);
    try {
      const cpu = () => {
        const u = process.cpuUsage();
        return (u.user + u.system) / 1e6;
      };
      let c0 = cpu();
      const md5 = await timeAsync(async () => void (await audio.audioMd5()));
      let c1 = cpu();
      line('check', `  fixity MD5 of the audio`, `${fmt(md5, 2)} s`, `CPU ${fmt(c1 - c0, 2)} s` + (big ? '' : ` → ${fmt((c1 - c0) * scale, 1)} s per hour`));
      c0 = cpu();
      await timeAsync(async () => {
        for await (const b of audio.blocks()) void b;
      });
      c1 = cpu();
      line('check', `  one decoding pass`, '', `CPU ${fmt(c1 - c0, 2)} s` + (big ? '' : ` → ${fmt((c1 - c0) * scale, 1)} s per hour`));
      for (const op of analyses().filter((o) => o.inDiagnose !== false)) {
        let note = '';
        c0 = cpu();
        const s = await timeAsync(async () => {
          try {
            await op.run(audio, validateParams(op.params, {}), silentContext);
          } catch (e) {
            if (e instanceof NotFoundError) note = '(found nothing)';
            else throw e;
          }
        });
        c1 = cpu();
        line('check', `  ${op.name} ${note}`, `${fmt(s, 2)} s`, `CPU ${fmt(c1 - c0, 2)} s` + (big ? '' : ` → ${fmt((c1 - c0) * scale, 1)} s per hour`));
      }
    } finally {
      await audio.close();
    }
    line('check', 'note', '', 'shared 2-core machine: other work running at the same time makes these numbers noisy');
  } finally {
    fs.rmSync(tmp, { recursive: true, force: true });
  }
}
