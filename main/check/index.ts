/**
 * `reelwright check PATH… [--report report.html] [--json report.json] [--csv report.csv]
 *  [--jobs N] [--resume] [--thresholds FILE] [analysis options]`
 *
 * Checks every audio file in the given files and folders (recursively): fixity checksum, then
 * every registered analysis that applies (dsp/ops/diagnose.ts), each file in a worker thread.
 * Thresholds (each analysis's default rules, listed by `check --help`, or --thresholds FILE) turn
 * the numbers into pass/warn/fail.
 * Exit status: 0 when no file fails, 1 when any file fails (unreadable files fail), 2 for bad usage
 * or when no audio file is found.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { analyses } from '../../dsp/ops/registry.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { AUDIO_EXTENSIONS as AUDIO_FILE_EXTENSIONS } from '../../dsp/formats/file-names.ts';
import type { ParamSpec, ParamValues } from '../../dsp/ops/types.ts';
import { parseArgs, type ParsedArgs } from '../cli/args.ts';
import { Progress, toJson } from '../cli/output.ts';
import { paramsFromFlags, reportError, suggestionCommand } from '../cli/index.ts';
import { checkFile, type CheckJob, type FileEntry, type JobResult, type Opener } from './check-file.ts';
import type { FromWorker, ToWorker } from './worker.ts';
import { defaultThresholds, documentedDefaults, judge, unresolvedGates, mergeThresholds, type Thresholds } from './thresholds.ts';
import { reportCsv, type CheckReport } from './report.ts';
import { reportHtml } from './report-html.ts';
import { checkManifestName, fileSha256, formatManifest, manifestRelative, parseManifest, payloadFiles, verifyManifest, type ManifestLine } from './fixity.ts';
import { newCheckThread } from './thread.ts';

export const AUDIO_EXTENSIONS: ReadonlySet<string> = new Set(AUDIO_FILE_EXTENSIONS);
const VERSION = '0.1.0';

export interface CheckOptions {
  /** Replace stdout / stderr (tests). */
  out?: (s: string) => void;
  err?: (s: string) => void;
  /** Run in this thread with this opener instead of worker threads (tests). */
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
  --jobs N                    Worker threads (default: the number of cores).
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

/** Flags of all registered analyses, with the verbs that take each. */
function analysisFlags(): Map<string, { spec: ParamSpec; ops: string[] }> {
  const m = new Map<string, { spec: ParamSpec; ops: string[] }>();
  for (const op of analyses()) {
    if (op.inDiagnose === false) continue;
    for (const spec of op.params) {
      const had = m.get(spec.flag);
      if (had) had.ops.push(op.name);
      else m.set(spec.flag, { spec, ops: [op.name] });
    }
  }
  return m;
}

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

/** Flags that only the queued mode (`--queue`) takes. */
export const QUEUE_VALUE_FLAGS = ['queue', 'batch', 'keep-days', 'attempts', 'retry-seconds'];

/** What every form of `check` (here, queued, and `report`) reads from its arguments. */
export interface CheckSetup {
  args: ParsedArgs;
  str(flag: string): string | undefined;
  thresholds: Thresholds;
  params: Record<string, ParamValues>;
  outputs: ReportOutputs;
}

export interface ReportOutputs {
  json?: string;
  html?: string;
  csv?: string;
  /** --manifest: the manifest to verify, read. */
  manifest?: { path: string; lines: ManifestLine[] };
  /** --write-manifest: where to write one. */
  writeManifest?: string;
}

/** Parses the check flags: thresholds, analysis parameters, report outputs, manifest options. */
export function parseCheckSetup(argv: string[], extra: { booleans?: string[]; values?: string[] } = {}): CheckSetup | 'help' {
  const opFlags = analysisFlags();
  const args = parseArgs(argv, {
    booleans: new Set(['help', 'resume', 'quiet', ...(extra.booleans ?? []), ...[...opFlags.values()].filter((f) => f.spec.type === 'boolean').map((f) => f.spec.flag)]),
    values: new Set(['report', 'json', 'csv', 'jobs', 'thresholds', 'manifest', 'write-manifest', ...(extra.values ?? []), ...[...opFlags.values()].filter((f) => f.spec.type !== 'boolean').map((f) => f.spec.flag)]),
  });
  if (args.flags.get('help')) return 'help';
  const str = (k: string) => {
    const v = args.flags.get(k);
    return typeof v === 'string' ? v : undefined;
  };

  // Thresholds.
  let thresholds = defaultThresholds();
  const thrPath = str('thresholds');
  if (thrPath) {
    let raw: unknown;
    try {
      raw = JSON.parse(fs.readFileSync(thrPath, 'utf8'));
    } catch (e) {
      throw new ParameterError(`--thresholds ${thrPath}: ${(e as Error).message}`);
    }
    if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) throw new ParameterError(`--thresholds ${thrPath}: expected a JSON object of rules`);
    thresholds = mergeThresholds(thresholds, raw as Record<string, unknown>, thrPath);
  }

  // Analysis parameters, routed to every analysis that has the flag.
  const params: Record<string, ParamValues> = {};
  for (const op of analyses()) {
    const mine = new Map([...args.flags].filter(([k]) => op.params.some((s) => s.flag === k)));
    if (mine.size) params[op.name] = paramsFromFlags(op.params, mine);
  }

  const outputs: ReportOutputs = { json: str('json'), html: str('report'), csv: str('csv') };
  const manifestPath = str('manifest');
  const writeManifest = str('write-manifest');
  if (manifestPath && writeManifest) throw new ParameterError('--manifest and --write-manifest: give one (verify an existing manifest, or write a new one)');
  if (manifestPath) {
    checkManifestName(manifestPath, 'manifest');
    let text: string;
    try {
      text = fs.readFileSync(manifestPath, 'utf8');
    } catch (e) {
      throw new ParameterError(`--manifest ${manifestPath}: ${(e as NodeJS.ErrnoException).code === 'ENOENT' ? 'no such file' : (e as Error).message}`);
    }
    outputs.manifest = { path: manifestPath, lines: parseManifest(text, manifestPath) };
  }
  if (writeManifest) {
    checkManifestName(writeManifest, 'write-manifest');
    if (fs.existsSync(writeManifest)) throw new ParameterError(`--write-manifest ${writeManifest}: the file exists; a manifest is a fixity record and is never replaced (remove it or choose another name)`);
    if (!fs.existsSync(path.dirname(path.resolve(writeManifest)))) throw new ParameterError(`--write-manifest ${writeManifest}: no such folder`);
    outputs.writeManifest = writeManifest;
  }
  return { args, str, thresholds, params, outputs };
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

/** Refuses (before any work) a manifest to be written where some checked file lies outside its folder. */
export function outsideManifest(manifestFile: string, paths: readonly string[], outputs: ReportOutputs): void {
  const payload = payloadFiles(paths, excludedFromPayload(outputs));
  const outside = payload.find((f) => manifestRelative(manifestFile, f) === undefined);
  if (outside) throw new ParameterError(`--write-manifest ${manifestFile}: ${outside} lies outside the manifest's folder; put the manifest in a folder that holds every checked file`);
}

function excludedFromPayload(outputs: ReportOutputs): Set<string> {
  return new Set([outputs.json, outputs.html, outputs.csv, outputs.manifest?.path, outputs.writeManifest].filter((p): p is string => p !== undefined).map((p) => path.resolve(p)));
}

export interface FinishOptions {
  paths: string[];
  thresholds: Thresholds;
  seconds: number;
  outputs: ReportOutputs;
  batch?: string;
  /** Also printed: lines about the run (e.g. files still queued). */
  notes?: string[];
}

/**
 * The end of every check (here, queued, `report`): verifies or writes the manifest, judges each
 * entry with the thresholds, writes the reports, prints one line per file and the summary, and
 * returns the exit gate (1 when any file fails or a listed file is missing or changed).
 */
export function finishCheck(raw: FileEntry[], o: FinishOptions, out: (s: string) => void): number {
  // A resumed entry may carry an earlier run's manifest status: only this run's counts.
  let entries = raw.map(({ manifest: _, ...e }) => e as FileEntry);
  let manifest: CheckReport['manifest'];
  const shaByPath = new Map(entries.filter((e) => e.file.sha256).map((e) => [path.resolve(e.file.path), e.file.sha256!] as const));
  if (o.outputs.manifest) {
    const payload = payloadFiles(o.paths, excludedFromPayload(o.outputs));
    const v = verifyManifest(o.outputs.manifest.path, o.outputs.manifest.lines, payload, (p) => shaByPath.get(p));
    manifest = v.check;
    entries = entries.map((e) => {
      const st = v.status.get(path.resolve(e.file.path));
      return st === undefined ? e : { ...e, manifest: st };
    });
  }
  entries = entries.map((e) => {
    const j = judge(e, o.thresholds);
    return { ...e, status: j.status, reasons: j.reasons };
  });
  const count = (s: string) => entries.filter((e) => e.status === s).length;
  const report: CheckReport = {
    tool: 'reelwright check',
    version: VERSION,
    createdAt: new Date().toISOString(),
    paths: o.paths,
    thresholds: o.thresholds,
    summary: {
      files: entries.length,
      pass: count('pass'),
      warn: count('warn'),
      fail: count('fail'),
      resumed: entries.filter((e) => e.resumed).length,
      seconds: o.seconds,
    },
    ...(manifest ? { manifest } : {}),
    ...(o.batch !== undefined ? { batch: o.batch } : {}),
    files: entries,
  };
  if (o.outputs.json) writeAtomic(o.outputs.json, toJson(report) + '\n');
  if (o.outputs.csv) writeAtomic(o.outputs.csv, reportCsv(report));
  if (o.outputs.html) writeAtomic(o.outputs.html, reportHtml(report, suggestionCommand));
  let written: string | undefined;
  if (o.outputs.writeManifest) {
    const target = o.outputs.writeManifest;
    const lines: ManifestLine[] = [];
    for (const f of payloadFiles(o.paths, excludedFromPayload(o.outputs))) {
      const rel = manifestRelative(target, f);
      if (rel === undefined) throw new ParameterError(`--write-manifest ${target}: ${f} lies outside the manifest's folder`);
      let sha = shaByPath.get(f);
      if (sha === undefined) {
        try {
          sha = fileSha256(f);
        } catch {
          continue; // vanished meanwhile: not part of the payload any more
        }
      }
      lines.push({ sha256: sha, relPath: rel });
    }
    writeAtomic(target, formatManifest(lines), true);
    written = `wrote ${target}: ${lines.length} file${lines.length === 1 ? '' : 's'} (SHA-256)`;
  }

  for (const e of entries) {
    const why = e.status === 'pass' ? '' : `  ${(e.reasons ?? []).join('; ')}`;
    out(`${e.status!.toUpperCase().padEnd(4)}  ${e.file.path}${why}`);
  }
  for (const n of o.notes ?? []) out(n);
  for (const w of unresolvedGates(entries, o.thresholds)) out(w);
  if (manifest) {
    for (const m of manifest.missing) out(`MISSING  ${m}  (listed in ${manifest.path})`);
    for (const c of manifest.changed) out(`CHANGED  ${c.path}  (SHA-256 ${c.actualSha256}, listed ${c.expectedSha256})`);
    for (const x of manifest.extra) out(`EXTRA  ${x}  (not listed in ${manifest.path})`);
  }
  if (written) out(written);
  const s = report.summary;
  const fixity = manifest ? `; manifest: ${manifest.verified} of ${manifest.listed} verified, ${manifest.missing.length} missing, ${manifest.changed.length} changed, ${manifest.extra.length} not listed` : '';
  out(`${s.files} file${s.files === 1 ? '' : 's'}: ${s.pass} pass, ${s.warn} warn, ${s.fail} fail${s.resumed ? ` (${s.resumed} unchanged since the last report)` : ''}${fixity} in ${s.seconds.toFixed(1)} s`);
  return s.fail > 0 || (manifest && (manifest.missing.length > 0 || manifest.changed.length > 0)) ? 1 : 0;
}

/** Audio files under the given paths, recursively, sorted; hidden files and AppleDouble "._" files skipped. */
export function collectAudioFiles(paths: readonly string[]): string[] {
  const found = new Set<string>();
  const seenDirs = new Set<string>();
  const walk = (dir: string) => {
    let real: string;
    try {
      real = fs.realpathSync(dir);
    } catch {
      return;
    }
    if (seenDirs.has(real)) return;
    seenDirs.add(real);
    let names: fs.Dirent[];
    try {
      names = fs.readdirSync(dir, { withFileTypes: true });
    } catch {
      return;
    }
    for (const d of names) {
      if (d.name.startsWith('.')) continue;
      const p = path.join(dir, d.name);
      let st: fs.Stats;
      try {
        st = fs.statSync(p);
      } catch {
        // A dangling link or a file we may not stat: report it if it looks like audio.
        if (AUDIO_EXTENSIONS.has(path.extname(d.name).toLowerCase())) found.add(p);
        continue;
      }
      if (st.isDirectory()) walk(p);
      else if (st.isFile() && AUDIO_EXTENSIONS.has(path.extname(d.name).toLowerCase())) found.add(p);
    }
  };
  for (const p of paths) {
    let st: fs.Stats;
    try {
      st = fs.statSync(p);
    } catch {
      throw new ParameterError(`${p}: no such file or folder`);
    }
    if (st.isDirectory()) walk(p);
    else found.add(p); // named explicitly: checked whatever its extension
  }
  // The same file named twice (a folder and a file inside it, or two spellings of a path) is checked once.
  const byReal = new Map<string, string>();
  for (const f of [...found].sort()) {
    let key = path.resolve(f);
    try {
      key = fs.realpathSync(f);
    } catch {
      /* keep the resolved path */
    }
    if (!byReal.has(key)) byReal.set(key, f);
  }
  return [...byReal.values()];
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

function writeAtomic(target: string, text: string, noReplace = false): void {
  const tmp = path.join(path.dirname(target), `.${path.basename(target)}.${process.pid}.tmp`);
  try {
    fs.writeFileSync(tmp, text);
    if (noReplace) {
      // A hard link fails when the target exists (no check-then-rename race).
      fs.linkSync(tmp, target);
      fs.rmSync(tmp);
    } else fs.renameSync(tmp, target);
  } catch (e) {
    try {
      fs.rmSync(tmp, { force: true });
    } catch {
      /* nothing to clean */
    }
    throw new ParameterError(`cannot write ${target}: ${(e as Error).message}`);
  }
}

/**
 * Runs the jobs on `workers` worker threads (or in this thread with `opener`), results in job
 * order. A worker that dies turns its job into a failed entry and is replaced.
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
  await new Promise<void>((resolve) => {
    let running = 0;
    const start = () => {
      const w = newCheckThread();
      let current = -1;
      let finished = false;
      const take = () => {
        if (next >= jobs.length) {
          finished = true;
          void w.terminate();
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
      w.on('exit', (code) => died(`worker stopped (exit code ${code})`));
      running++;
    };
    for (let i = 0; i < workers; i++) start();
  });
  return results;
}
