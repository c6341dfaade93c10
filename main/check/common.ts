/**
 * What every form of `reelwright check` shares — here (index.ts), on the job queue
 * (queue/enqueue.ts) and `reelwright report` (queue/report.ts): the audio files under the checked
 * paths, the flags (thresholds, analysis parameters, report outputs, manifest options) and the
 * common end (manifest, judging, the three reports, the printed lines and the exit gate).
 */
import fs from 'node:fs';
import path from 'node:path';
import { analyses } from '../../dsp/ops/registry.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { AUDIO_EXTENSIONS as AUDIO_FILE_EXTENSIONS } from '../../dsp/formats/file-names.ts';
import type { ParamSpec, ParamValues } from '../../dsp/ops/types.ts';
import { parseArgs, type ParsedArgs } from '../cli/args.ts';
import { toJson } from '../cli/output.ts';
import { paramsFromFlags, suggestionCommand } from '../cli/shared.ts';
import type { FileEntry } from './check-file.ts';
import { defaultThresholds, judge, unresolvedGates, mergeThresholds, type Thresholds } from './thresholds.ts';
import { reportCsv, type CheckReport } from './report.ts';
import { reportHtml } from './report-html.ts';
import { walkFiles } from './walk.ts';
import { checkManifestName, fileSha256, formatManifest, manifestRelative, parseManifest, payloadFiles, verifyManifest, type ManifestLine } from './fixity.ts';

export const AUDIO_EXTENSIONS: ReadonlySet<string> = new Set(AUDIO_FILE_EXTENSIONS);
const VERSION = '0.1.0';

/** Flags of all registered analyses, with the verbs that take each. */
export function analysisFlags(): Map<string, { spec: ParamSpec; ops: string[] }> {
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
  const isAudio = (name: string) => AUDIO_EXTENSIONS.has(path.extname(name).toLowerCase());
  const found = walkFiles(paths, {
    accept: isAudio,
    // A dangling link or a file we may not stat: report it if it looks like audio.
    keepUnreadable: isAudio,
    onMissing: (p) => {
      throw new ParameterError(`${p}: no such file or folder`);
    },
    keepNamedSpecial: true, // named explicitly: checked whatever its extension
  });
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
