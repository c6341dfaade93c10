/**
 * One fuzzing process (started by fuzz.ts, which watches it for hangs): runs cases [from, to) of a
 * seed through every reader path and reports on stdout, one JSON object a line:
 *   {"t":"case","i":N}                  before each case (the parent's hang watchdog)
 *   {"t":"bad","i":N,...}               a crash, a bad refusal, a wrong read or a memory overrun
 *   {"t":"summary","counts":{...}}      per family and outcome, at the end or when stopping early
 * After a memory overrun the process stops (its peak RSS can no longer attribute later cases);
 * the parent restarts from the next case.
 *
 * Per case: openAudio(); when it opens, a full forward read in 4096-frame blocks, a default-size
 * pass (for FLAC this checks the MD5), audioMd5(), scanNonFinite(), a ranged read from a third of
 * the way in (FLAC: a seek) and a reverse read of the end; every block must have the file's
 * channel count, finite samples, and the reads must add up to the file's length. Every
 * `cliEvery`-th case also runs `info --json` or `diagnose --json` in-process through the command
 * line: exit 0 with one JSON object on stdout, or exit 2 with one line on stderr naming the file.
 */
import fs from 'node:fs';
import path from 'node:path';
import { InputError } from '../../dsp/errors.ts';
import { openAudio } from '../../main/io/reader.ts';
import { io, main } from '../../main/cli/index.ts';
import { buildSeeds, mutate, type Family } from './corpus.ts';

export type Outcome = 'ok' | 'refused' | 'crash' | 'badRefusal' | 'wrongRead' | 'memory' | 'hang';
export type Counts = Record<string, Partial<Record<Outcome, number>>>;

/** Peak RSS growth above the warmed-up baseline that counts as a read above the memory bound. */
export const MEMORY_BOUND_MB = 128;

function arg(name: string, fallback: number): number {
  const i = process.argv.indexOf(`--${name}`);
  return i > 0 ? Number(process.argv[i + 1]) : fallback;
}

const emit = (o: object) => process.stdout.write(JSON.stringify(o) + '\n');

interface Verdict {
  outcome: Outcome;
  detail?: string;
}

function refusal(e: unknown, file: string): Verdict {
  if (e instanceof InputError) {
    const line = e.oneLine();
    if (line.includes('\n') || !line.startsWith(`${file}: `)) return { outcome: 'badRefusal', detail: line };
    return { outcome: 'refused' };
  }
  return { outcome: 'crash', detail: `${(e as Error)?.name}: ${(e as Error)?.message}\n${(e as Error)?.stack?.split('\n').slice(1, 4).join('\n')}` };
}

async function readEverything(file: string): Promise<Verdict> {
  let a;
  try {
    a = await openAudio(file);
  } catch (e) {
    return refusal(e, file);
  }
  try {
    const integer = a.sampleFormat === 'int';
    const check = (block: Float64Array[], what: string): string | null => {
      if (block.length !== a!.channelCount) return `${what}: a block of ${block.length} channels, ${a!.channelCount} expected`;
      const n = block[0]!.length;
      for (const ch of block) {
        if (ch.length !== n) return `${what}: channels of different lengths`;
        // Integer samples are code / 2^(b−1), within [−1, 1); float samples may pass full scale
        // but are finite (NaN and ±Inf are read as 0).
        for (let i = 0; i < n; i++) if (!Number.isFinite(ch[i]!) || (integer && Math.abs(ch[i]!) > 1)) return `${what}: sample ${ch[i]} out of range`;
      }
      return null;
    };
    let total = 0;
    for await (const b of a.blocks({ blockFrames: 4096 })) {
      const bad = check(b, 'forward read');
      if (bad) return { outcome: 'wrongRead', detail: bad };
      total += b[0]!.length;
    }
    if (total !== a.frames) return { outcome: 'wrongRead', detail: `forward read gave ${total} frames of ${a.frames}` };
    total = 0;
    for await (const b of a.blocks()) total += b[0]!.length;
    if (total !== a.frames) return { outcome: 'wrongRead', detail: `default read gave ${total} frames of ${a.frames}` };
    await a.audioMd5();
    await a.scanNonFinite();
    const start = Math.floor(a.frames / 3);
    const end = Math.min(a.frames, start + 1000);
    total = 0;
    for await (const b of a.blocks({ startFrame: start, endFrame: end, blockFrames: 333 })) total += b[0]!.length;
    if (total !== end - start) return { outcome: 'wrongRead', detail: `range read gave ${total} frames of ${end - start}` };
    total = 0;
    for await (const b of a.blocks({ startFrame: Math.max(0, a.frames - 500), reverse: true, blockFrames: 128 })) {
      const bad = check(b, 'reverse read');
      if (bad) return { outcome: 'wrongRead', detail: bad };
      total += b[0]!.length;
    }
    if (total !== Math.min(500, a.frames)) return { outcome: 'wrongRead', detail: `reverse read gave ${total} frames` };
    return { outcome: 'ok' };
  } catch (e) {
    return refusal(e, file);
  } finally {
    await a.close();
  }
}

async function throughCli(verb: 'info' | 'diagnose', file: string): Promise<Verdict> {
  let out = '', err = '';
  const saved = { ...io };
  io.out = (s) => void (out += s.endsWith('\n') ? s : s + '\n');
  io.err = (s) => void (err += s.endsWith('\n') ? s : s + '\n');
  let code: number;
  try {
    code = await main([verb, file, '--json', '--quiet']);
  } finally {
    Object.assign(io, saved);
  }
  const errLines = err.split('\n').filter((l) => l !== '');
  if (code === 0) {
    try {
      JSON.parse(out);
    } catch {
      return { outcome: 'crash', detail: `${verb} --json exit 0 without one JSON object on stdout` };
    }
    if (errLines.some((l) => !l.startsWith('warning: '))) return { outcome: 'badRefusal', detail: `${verb}: exit 0 with ${err}` };
    return { outcome: 'ok' };
  }
  if (code === 2) {
    if (errLines.length !== 1 || !errLines[0]!.startsWith(`reelwright ${verb}: ${file}`) || out !== '') {
      return { outcome: 'badRefusal', detail: `${verb} exit 2: ${err}` };
    }
    return { outcome: 'refused' };
  }
  return { outcome: 'crash', detail: `${verb} exit ${code}: ${err}` };
}

async function run(): Promise<void> {
  const seed = arg('seed', 1), from = arg('from', 0), to = arg('to', 1000), cliEvery = arg('cli-every', 0);
  const dirIdx = process.argv.indexOf('--dir');
  const dir = process.argv[dirIdx + 1]!;
  const seeds = await buildSeeds(dir);
  const counts: Counts = {};
  const count = (family: Family | string, outcome: Outcome) => {
    const c = (counts[family] ??= {});
    c[outcome] = (c[outcome] ?? 0) + 1;
  };
  let baselineKb = 0;
  for (let i = from; i < to; i++) {
    emit({ t: 'case', i });
    const m = mutate(seeds, seed, i);
    const file = path.join(dir, `case-${m.base.name}`);
    fs.writeFileSync(file, m.bytes);
    const cli = cliEvery > 0 && i % cliEvery === 0;
    const v = cli ? await throughCli(Math.floor(i / cliEvery) % 2 === 0 ? 'info' : 'diagnose', file) : await readEverything(file);
    const family = cli ? `${m.base.family} (command line)` : m.base.family;
    count(family, v.outcome);
    if (v.outcome !== 'ok' && v.outcome !== 'refused') emit({ t: 'bad', i, family, base: m.base.name, outcome: v.outcome, what: m.what, detail: v.detail });
    const rssKb = process.resourceUsage().maxRSS;
    if (i === from + 40) baselineKb = rssKb;
    if (baselineKb > 0 && rssKb - baselineKb > MEMORY_BOUND_MB * 1024) {
      count(family, 'memory');
      emit({ t: 'bad', i, family, base: m.base.name, outcome: 'memory', what: m.what, detail: `peak RSS ${(rssKb / 1024).toFixed(0)} MB, ${((rssKb - baselineKb) / 1024).toFixed(0)} MB above the baseline` });
      emit({ t: 'summary', counts, stoppedAt: i });
      return;
    }
  }
  emit({ t: 'summary', counts });
}

await run();
