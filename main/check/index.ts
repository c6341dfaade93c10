/**
 * `reelwright check PATH… [--report report.html] [--json report.json] [--csv report.csv]
 *  [--jobs N] [--resume] [--thresholds FILE] [analysis options]`
 *
 * Checks every audio file in the given files and folders (recursively): fixity checksum, then
 * every registered analysis that applies (dsp/ops/diagnose.ts), each file in a check process of its own (thread.ts).
 * Thresholds (each analysis's default rules, listed by `check --help`, or --thresholds FILE) turn
 * the numbers into pass/warn/fail.
 * Exit status: 0 when no file fails, 1 when any file fails (unreadable files fail), 2 for bad usage
 * or when no audio file is found.
 */
import fs from 'node:fs';
import os from 'node:os';
import { ParameterError } from '../../dsp/errors.ts';
import { Progress } from '../cli/output.ts';
import { reportError } from '../cli/shared.ts';
import { checkFile, type CheckJob, type FileEntry, type JobResult, type Opener } from './check-file.ts';
import type { FromWorker, ToWorker } from './worker.ts';
import { documentedDefaults } from './thresholds.ts';
import type { CheckReport } from './report.ts';
import { newCheckThread } from './thread.ts';
import { analysisFlags, AUDIO_EXTENSIONS, collectAudioFiles, finishCheck, outsideManifest, parseCheckSetup, QUEUE_VALUE_FLAGS } from './common.ts';

export { AUDIO_EXTENSIONS, collectAudioFiles, finishCheck, outsideManifest, parseCheckSetup, QUEUE_VALUE_FLAGS } from './common.ts';
export type { CheckSetup, FinishOptions, ReportOutputs } from './common.ts';

export interface CheckOptions {
  /** Replace stdout / stderr (tests). */
  out?: (s: string) => void;
  err?: (s: string) => void;
  /** Run in this thread with this opener instead of check processes (tests). */
  opener?: Opener;
}

const USAGE = `reelwright check PATH… [options]

Checks every audio file (WAV, BWF, RF64, AIFF, FLAC) in the given files and folders, recursively:
fixity checksum, levels and loudness, spectrum and bandwidth, wow and flutter when a test tone is
found, azimuth for stereo, and every other analysis that applies. Thresholds decide pass, warn or
fail per finding; the exit status is 1 when any file fails, so it can gate a digitisation pipeline.

Options:
  --report FILE.html          Write the report as one self-contained HTML page.
  --json FILE.json            Write the report as JSON (one entry per file, with status and reasons).
  --csv FILE.csv              Write one row per file.
  --jobs N                    Files checked at once, one process each (default: the number of cores).
  --resume                    Take over files from the existing --json report whose audio checksum is unchanged.
  --thresholds FILE.json      Pass/warn/fail rules replacing the defaults (listed below) one by one; null switches one off.
  --manifest FILE             Verify a SHA-256 manifest ("CHECKSUM  PATH" lines, paths relative to its folder, as in
                              BagIt): lists missing, changed and unlisted files; a missing or changed file fails.
  --write-manifest FILE       Write such a manifest of every file under the checked paths (never replaces a file).
  --quiet                     No progress line.
Many machines (a Redis-backed job queue; start workers with \`reelwright worker\`):
  --queue redis://HOST:PORT/DB  Enqueue one job per file instead of checking here (rediss:// for TLS;
                              a password as redis://:PASSWORD@HOST or in REELWRIGHT_QUEUE_PASSWORD).
  --batch NAME                The batch's name (letters, digits, . _ -). Enqueueing it again re-checks changed
                              files only; \`reelwright report --queue URL --batch NAME\` writes its reports.
  --wait                      Follow the batch until every file is checked, then report as above.
  --keep-days D               How long Redis keeps the batch's results after its last change (default 30).
  --attempts N                Tries per file when a worker cannot read it (default 3).
  --retry-seconds S           Pause before the first retry, doubled for each next one (default 10).
Analysis options (passed to the analyses that take them):
`;

export async function runCheck(argv: string[], options: CheckOptions = {}): Promise<number> {
  const out = options.out ?? ((s: string) => void process.stdout.write(s.endsWith('\n') ? s : s + '\n'));
  const err = options.err ?? ((s: string) => void process.stderr.write(s.endsWith('\n') ? s : s + '\n'));
  try {
    return await check(argv, options, out, err);
  } catch (e) {
    if (e instanceof ParameterError) {
      err(`reelwright check: ${e.message}`);
      return 2;
    }
    return reportError('check', e);
  }
}

function checkHelp(): string {
  const lines = [...analysisFlags().values()].map(({ spec, ops }) => `  --${spec.flag}${spec.type === 'boolean' ? '' : ' N'}`.padEnd(30) + ` ${spec.help} (${ops.join(', ')})`);
  const rules = documentedDefaults().map(({ id, rule, comment }) => {
    const bits = Object.entries(rule).map(([k, v]) => `${k} ${v}`).join(', ');
    return `  ${id}`.padEnd(30) + ` ${bits}: ${comment}`;
  });
  return USAGE + lines.join('\n') + '\nDefault rules (a thresholds file names them the same way, e.g. {"levels.truePeakDbtp": {"warnAt": -1}}):\n' + rules.join('\n');
}

async function check(argv: string[], options: CheckOptions, out: (s: string) => void, err: (s: string) => void): Promise<number> {
  const setup = parseCheckSetup(argv, { booleans: ['wait'], values: QUEUE_VALUE_FLAGS });
  if (setup === 'help') {
    out(checkHelp());
    return 0;
  }
  const { args, str, outputs } = setup;
  if (args.positionals.length === 0) throw new ParameterError('expected at least one file or folder (usage: reelwright check PATH… [--report report.html] [--json report.json] [--csv report.csv])');
  if (args.flags.has('queue')) return (await import('./queue/enqueue.ts')).enqueueCheck(setup, out, err);
  for (const f of [...QUEUE_VALUE_FLAGS, 'wait']) if (args.flags.has(f)) throw new ParameterError(`--${f} needs --queue URL (the job queue to use)`);

  const jobsText = str('jobs');
  const jobs = jobsText === undefined ? Math.max(1, os.availableParallelism?.() ?? os.cpus().length) : Number(jobsText);
  if (!Number.isInteger(jobs) || jobs < 1 || jobs > 256) throw new ParameterError(`--jobs ${jobsText}: expected a whole number from 1 to 256`);
  const resume = args.flags.get('resume') === true;
  if (resume && !outputs.json) throw new ParameterError('--resume needs --json FILE: the earlier report to take unchanged files from');

  const files = collectAudioFiles(args.positionals);
  if (files.length === 0) {
    err(`reelwright check: no audio files (${[...AUDIO_EXTENSIONS].join(' ')}) found in ${args.positionals.join(', ')}`);
    return 2;
  }
  if (outputs.writeManifest) outsideManifest(outputs.writeManifest, args.positionals, outputs);

  const previous = resume && outputs.json ? loadPrevious(outputs.json, err) : new Map<string, FileEntry>();
  const t0 = Date.now();
  const progress = new Progress('check', args.flags.get('quiet') === true);
  const sizes = files.map((f) => fileSize(f));
  const totalBytes = sizes.reduce((a, b) => a + b, 0) || 1;
  const fractions = new Float64Array(files.length);
  let done = 0, failed = 0;
  const tick = () => {
    let b = 0;
    for (let i = 0; i < files.length; i++) b += fractions[i]! * sizes[i]!;
    progress.update(b / totalBytes, `(${done}/${files.length} files${failed ? `, ${failed} failed` : ''})`);
  };

  const jobsList: CheckJob[] = files.map((p) => ({ path: p, params: setup.params, previousMd5: previous.get(p)?.file.audioMd5 }));
  const results = await runJobs(jobsList, Math.min(jobs, files.length), options.opener, (i, f) => {
    fractions[i] = f;
    tick();
  }, (i, r) => {
    fractions[i] = 1;
    done++;
    if (r.kind === 'entry' && (r.entry.error !== undefined)) failed++;
    tick();
  });
  progress.done();

  const entries: FileEntry[] = results.map((r, i) => (r.kind === 'unchanged' ? { ...previous.get(files[i]!)!, file: r.file, resumed: true } : r.entry));
  return finishCheck(entries, { paths: args.positionals, thresholds: setup.thresholds, seconds: (Date.now() - t0) / 1000, outputs }, out);
}

function fileSize(p: string): number {
  try {
    return fs.statSync(p).size;
  } catch {
    return 0;
  }
}

function loadPrevious(jsonPath: string, err: (s: string) => void): Map<string, FileEntry> {
  const m = new Map<string, FileEntry>();
  if (!fs.existsSync(jsonPath)) return m;
  try {
    const r = JSON.parse(fs.readFileSync(jsonPath, 'utf8')) as Partial<CheckReport>;
    for (const e of r.files ?? []) {
      if (e?.file?.path && typeof e.file.audioMd5 === 'string' && e.error === undefined) m.set(e.file.path, e);
    }
  } catch (e) {
    err(`warning: --resume: could not read ${jsonPath} (${(e as Error).message}); checking every file`);
  }
  return m;
}

/**
 * Runs the jobs on `workers` check processes (or in this thread with `opener`), results in job
 * order. A process that dies turns its job into a failed entry and is replaced.
 */
async function runJobs(
  jobs: CheckJob[],
  workers: number,
  opener: Opener | undefined,
  onProgress: (index: number, fraction: number) => void,
  onDone: (index: number, result: JobResult) => void,
): Promise<JobResult[]> {
  const results: JobResult[] = new Array(jobs.length);
  if (opener) {
    for (let i = 0; i < jobs.length; i++) {
      results[i] = await checkFile(jobs[i]!, opener, (f) => onProgress(i, f));
      onDone(i, results[i]!);
    }
    return results;
  }
  let next = 0;
  const stopping: Promise<void>[] = [];
  await new Promise<void>((resolve) => {
    let running = 0;
    const start = () => {
      const w = newCheckThread();
      let current = -1;
      let finished = false;
      const take = () => {
        if (next >= jobs.length) {
          finished = true;
          stopping.push(w.stop());
          if (--running === 0) resolve();
          return;
        }
        current = next++;
        w.postMessage({ type: 'job', id: current, job: jobs[current]! } satisfies ToWorker);
      };
      w.on('message', (m: FromWorker) => {
        if (m.type === 'ready') take();
        else if (m.type === 'progress') onProgress(m.id, m.fraction);
        else if (m.type === 'result') {
          results[m.id] = m.result;
          onDone(m.id, m.result);
          take();
        }
      });
      const died = (why: string) => {
        if (finished) return;
        finished = true;
        running--;
        if (current >= 0 && results[current] === undefined) {
          results[current] = { kind: 'entry', entry: { file: { path: jobs[current]!.path }, findings: [], notes: [], error: `internal error: ${why}`, seconds: 0 } };
          onDone(current, results[current]!);
        }
        if (next < jobs.length) start();
        else if (running === 0) resolve();
      };
      w.on('error', (e) => died(e.message));
      w.on('exit', (code) => died(`the check process stopped (exit code ${code})`));
      running++;
    };
    for (let i = 0; i < workers; i++) start();
  });
  await Promise.all(stopping);
  return results;
}
