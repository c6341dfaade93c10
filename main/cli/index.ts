/**
 * The `reelwright` command line. Every verb except the built-ins (`diagnose`, `check`) is generated
 * from the operation registry: an analysis reads FILE and prints its result; a correction reads IN
 * and writes OUT. Contract: ARCHITECTURE.md ("Command line contract").
 */
import path from 'node:path';
import { existsSync, writeFileSync } from 'node:fs';
import { operations, findOperation } from '../../dsp/ops/registry.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { analysisJson, diagnose, factsOf, findingsOf } from '../../dsp/ops/diagnose.ts';
import type { AnalysisOp, CorrectionOp, Finding, OpContext, Operation, ParamSpec } from '../../dsp/ops/types.ts';
import { CancelledError, InputError, NotFoundError, ParameterError } from '../../dsp/errors.ts';
import { openAudio } from '../io/reader.ts';
import { writeAudio } from '../io/writer.ts';
import type { FileInfo, OpenedAudio, WriteOptions } from '../io/types.ts';
import { parseArgs, type FlagShape } from './args.ts';
import { humanize, Progress, toJson } from './output.ts';
import { interruption, whileWriting } from './interrupt.ts';
import { InternalFailure, WarningHold } from './failures.ts';
import { io, paramsFromFlags, reportError, suggestionCommand } from './shared.ts';
import { installReclaim } from '../io/reclaim.ts';

export { io, paramsFromFlags, reportError, suggestionCommand } from './shared.ts';

const COMMON_BOOLEANS = ['json', 'quiet', 'help'];
const OUTPUT_FLAGS: ParamSpec[] = [
  { name: 'bits', flag: 'bits', type: 'integer', label: 'Bit depth', help: 'Output word length: 16, 24 or 32 (integer), or 32/64 with --float. Default: as the source.', min: 8, max: 64 },
  { name: 'float', flag: 'float', type: 'boolean', label: 'Float', help: 'Write IEEE float samples (32-bit unless --bits 64).' },
  { name: 'dither', flag: 'dither', type: 'boolean', label: 'Dither', help: 'TPDF dither when the output word length is shorter than the source (default on; --no-dither turns it off).', default: true },
  { name: 'overwrite', flag: 'overwrite', type: 'boolean', label: 'Overwrite', help: 'Replace OUT if it exists (without it an existing OUT is refused, exit 2). The source is never replaced.' },
  { name: 'rf64', flag: 'rf64', type: 'boolean', label: 'RF64', help: 'Write the RF64 container even below 4 GiB (it is chosen by itself past 4 GiB).' },
];

type Builtin = (argv: string[]) => Promise<number>;
const BUILTINS: Record<string, { summary: string; run: Builtin }> = {
  diagnose: { summary: 'Run every analysis that applies and list the findings in plain words.', run: runDiagnose },
  check: { summary: 'Check folders of transfers: every analysis, pass/warn/fail per file, HTML/JSON/CSV reports.', run: async (argv) => (await import('../check/index.ts')).runCheck(argv) },
  // Many machines: `check … --queue URL --batch NAME` enqueues; these take the jobs and report.
  worker: { summary: 'Check files queued by `check --queue` on this machine (any number of machines).', run: async (argv) => (await import('../check/queue/worker.ts')).runWorker(argv) },
  report: { summary: 'Write the HTML/JSON/CSV reports of a queued batch (same gate as check).', run: async (argv) => (await import('../check/queue/report.ts')).runQueueReport(argv) },
};

/** Warnings of the command under way wait for its result, so a refusal stays one line. */
const warnings = new WarningHold((m) => io.err(`warning: ${m}`));

export async function main(argv: string[]): Promise<number> {
  installReclaim();
  const [verb, ...rest] = argv;
  if (!verb || verb === '--help' || verb === '-h' || verb === 'help') {
    io.out(generalHelp());
    return verb ? 0 : 2;
  }
  if (verb === '--version') {
    io.out('reelwright 0.1.0');
    return 0;
  }
  try {
    const builtin = BUILTINS[verb];
    if (builtin) return await builtin.run(rest);
    const op = findOperation(verb);
    if (!op) {
      io.err(`reelwright: unknown verb "${verb}". Run "reelwright --help" for the list.`);
      return 2;
    }
    return op.kind === 'analysis' ? await runAnalysis(op, rest) : await runCorrection(op, rest);
  } catch (e) {
    return reportError(verb, e);
  }
}

/**
 * A parameter that does not fit the opened file (a range past its end, a channel it lacks) or a
 * search that found nothing: the one-line message names the file first.
 */
function namingFile(e: unknown, filePath: string): unknown {
  if (e instanceof ParameterError && !e.message.startsWith(filePath)) return new ParameterError(`${filePath}: ${e.message}`);
  if (e instanceof NotFoundError && !e.message.startsWith(filePath)) return new NotFoundError(`${filePath}: ${e.message}`);
  if (e instanceof InputError || e instanceof CancelledError || e instanceof ParameterError || e instanceof NotFoundError) return e;
  return new InternalFailure(filePath, e);
}

/**
 * Opens FILE, runs `body` on it and always closes it and the progress line; a parameter that does
 * not fit the file, a search that found nothing, or an internal error is reported with the file's
 * path first.
 */
async function usingFile<T>(filePath: string, progress: Progress, body: (file: OpenedAudio) => Promise<T>): Promise<T> {
  warnings.hold();
  let file: OpenedAudio | undefined;
  try {
    file = await openAudio(filePath);
    const result = await body(file);
    warnings.release();
    return result;
  } catch (e) {
    warnings.drop();
    throw namingFile(e, file?.path ?? filePath);
  } finally {
    progress.done();
    await file?.close();
  }
}

function shapeFor(specs: readonly ParamSpec[], extraValues: string[] = [], extraBooleans: string[] = []): FlagShape {
  return {
    booleans: new Set([...COMMON_BOOLEANS, ...extraBooleans, ...specs.filter((s) => s.type === 'boolean').map((s) => s.flag)]),
    values: new Set([...extraValues, ...specs.filter((s) => s.type !== 'boolean').map((s) => s.flag)]),
  };
}

function context(progress: Progress): OpContext {
  return {
    progress: (f) => progress.update(f),
    warn: (m) => {
      if (warnings.add(m)) return;
      progress.done();
      io.err(`warning: ${m}`);
    },
    signal: interruption,
  };
}

async function runAnalysis(op: AnalysisOp, argv: string[]): Promise<number> {
  const extras = [...(op.render ? ['out'] : []), ...(op.compare ? ['compare'] : [])];
  const args = parseArgs(argv, shapeFor(op.params, extras));
  if (args.flags.get('help')) {
    io.out(verbHelp(op));
    return 0;
  }
  if (args.positionals.length !== 1) throw new ParameterError(`expected one FILE (usage: reelwright ${op.name} FILE [options])`);
  const params = paramsFromFlags(op.params, args.flags);
  const json = args.flags.get('json') === true;
  const progress = new Progress(op.name, args.flags.get('quiet') === true);
  return usingFile(args.positionals[0]!, progress, async (file) => {
    const facts = factsOf(file);
    if (op.applies && !op.applies(facts)) {
      throw new ParameterError(`${file.path}: ${op.name} does not apply to this file (${facts.channelCount} channel(s), ${facts.sampleRateHz} Hz)`);
    }
    const ctx = context(progress);
    const result = await op.run(file, params, ctx);
    warnNonFinite(file);
    const info = { ...file.info };
    if (op.name === 'info') info.audioMd5 = await file.audioMd5();
    const output: Record<string, unknown> = { file: info, ...analysisJson(op, result) };
    const findings = findingsOf(op, result, facts);

    let other: OpenedAudio | undefined;
    const comparePath = args.flags.get('compare');
    let otherResult: unknown;
    if (typeof comparePath === 'string' && op.compare) {
      other = await openAudio(comparePath);
      otherResult = await op.run(other, params, ctx);
      output.compare = { file: other.info, ...analysisJson(op, otherResult), difference: op.compare(result, otherResult) };
    }
    const outPath = args.flags.get('out');
    if (typeof outPath === 'string' && op.render) {
      const ext = path.extname(outPath).toLowerCase();
      if (ext !== '.svg' && ext !== '.csv') throw new ParameterError(`--out ${outPath}: expected a .svg or .csv file name`);
      writeFileSync(outPath, op.render(result, ext === '.svg' ? 'svg' : 'csv', otherResult));
    }
    await other?.close();
    progress.done();
    warnings.release();
    if (json) io.out(toJson(output));
    else io.out(describe(fileLine(info), findings, { ...output, file: undefined, ...(op.name === 'info' ? { chunks: info.chunks.join(' '), audioMd5: info.audioMd5 } : {}) }));
    return 0;
  });
}

/** Output format: as the source unless --bits/--float say otherwise; dither only when shortening. */
export function outputFormat(source: OpenedAudio, flags: Map<string, string | boolean>): Pick<WriteOptions, 'bitsPerSample' | 'sampleFormat' | 'dither' | 'forceRf64'> {
  const p = paramsFromFlags(OUTPUT_FLAGS, flags);
  const float = p.float === true || (p.float === undefined && p.bits === undefined && source.sampleFormat === 'float');
  const bits = (p.bits as number | undefined) ?? (float ? (source.sampleFormat === 'float' ? source.bitsPerSample : 32) : source.bitsPerSample);
  if (float && bits !== 32 && bits !== 64) throw new ParameterError(`--bits ${bits}: float output is 32 or 64 bits`);
  if (!float && ![8, 16, 24, 32].includes(bits)) throw new ParameterError(`--bits ${bits}: integer output is 8, 16, 24 or 32 bits`);
  const shortening = !float && (source.sampleFormat === 'float' || bits < source.bitsPerSample);
  return { bitsPerSample: bits as WriteOptions['bitsPerSample'], sampleFormat: float ? 'float' : 'int', dither: shortening && p.dither !== false, forceRf64: p.rf64 === true };
}

async function runCorrection(op: CorrectionOp, argv: string[]): Promise<number> {
  const args = parseArgs(argv, shapeFor([...op.params, ...OUTPUT_FLAGS]));
  if (args.flags.get('help')) {
    io.out(verbHelp(op));
    return 0;
  }
  if (args.positionals.length !== 2) throw new ParameterError(`expected IN and OUT (usage: reelwright ${op.name} IN OUT [options])`);
  const [inPath, outPath] = args.positionals as [string, string];
  if (path.resolve(inPath) === path.resolve(outPath)) {
    throw new ParameterError(`refusing to write onto the source file ${inPath}; originals are never modified — choose another OUT`);
  }
  const overwrite = args.flags.get('overwrite') === true;
  if (!overwrite && existsSync(outPath)) throw new ParameterError(`${outPath} already exists; nothing was written (pass --overwrite to replace it)`);
  const params = paramsFromFlags(op.params, args.flags);
  const json = args.flags.get('json') === true;
  const progress = new Progress(op.name, args.flags.get('quiet') === true);
  return usingFile(inPath, progress, async (source) => {
    const bad = await source.scanNonFinite();
    if (bad > 0) {
      throw new InputError(`${bad} samples are NaN or infinite; refusing to process a damaged file (repair or re-export it first)`, source.path);
    }
    const format = outputFormat(source, args.flags);
    const ctx = context(progress);
    const measure = op.measures ? (findOperation(op.measures) as AnalysisOp | undefined) : undefined;
    const before = json && measure ? await measure.run(source, validateParams(measure.params, {}), silentProgress(ctx)) : undefined;
    const rendering = await op.prepare(source, params, ctx);
    const hint = rendering.framesHint ?? source.frames;
    const written = await whileWriting(() => writeAudio(outPath, rendering, {
      ...format,
      copyFrom: source,
      sourcePath: source.path,
      historyText: op.history(rendering.resolved),
      overwrite,
      signal: interruption,
      // FLAC carries an MD5 of its audio: a rendering that did not check it on the way (reverse,
      // ranges) checks it before the output is kept.
      beforeCommit: source.info.format === 'FLAC' ? () => source.audioMd5() : undefined,
      onProgress: (frames) => progress.update(frames / Math.max(1, hint)),
    }));
    progress.done();
    if (written.notCarried) io.err(`warning: ${source.path}: not carried into ${written.path}: ${written.notCarried.join(', ')}`);
    const result: Record<string, unknown> = { parameters: rendering.resolved, output: written };
    if (measure && json) {
      const out = await openAudio(outPath);
      try {
        const after = await measure.run(out, validateParams(measure.params, {}), silentProgress(ctx));
        result.before = analysisJson(measure, before);
        result.after = analysisJson(measure, after);
      } finally {
        await out.close();
      }
    }
    warnings.release();
    if (json) io.out(toJson({ file: source.info, [op.name]: result }));
    else io.out(`${op.title}: wrote ${written.path} (${written.frames} frames, ${(written.frames / rendering.sampleRateHz).toFixed(3)} s, ${written.container}).\n${humanize({ parameters: rendering.resolved })}`);
    return 0;
  });
}

/** Float files may hold NaN/Inf samples; the reader counts them (read as 0) and we say so once. */
function warnNonFinite(file: OpenedAudio): void {
  const n = file.nonFiniteSamples ?? 0;
  if (n === 0) return;
  const m = `${file.path}: ${n} samples are NaN or infinite and were read as 0`;
  if (!warnings.add(m)) io.err(`warning: ${m}`);
}

const silentProgress = (ctx: OpContext): OpContext => ({ ...ctx, progress: () => {} });

async function runDiagnose(argv: string[]): Promise<number> {
  const args = parseArgs(argv, shapeFor([]));
  if (args.flags.get('help')) {
    io.out(`reelwright diagnose FILE [--json] [--quiet]\n\n${BUILTINS.diagnose!.summary}\nAnalyses run: ${operations
      .filter((o) => o.kind === 'analysis' && (o as AnalysisOp).inDiagnose !== false)
      .map((o) => o.name)
      .join(', ')}.`);
    return 0;
  }
  if (args.positionals.length !== 1) throw new ParameterError('expected one FILE (usage: reelwright diagnose FILE [--json])');
  const progress = new Progress('diagnose', args.flags.get('quiet') === true);
  return usingFile(args.positionals[0]!, progress, async (file) => {
    const result = await diagnose(file, context(progress));
    warnNonFinite(file);
    const info = { ...file.info, audioMd5: await file.audioMd5() };
    progress.done();
    warnings.release();
    if (args.flags.get('json') === true) {
      io.out(toJson({ file: info, ...result.sections, findings: result.findings, notes: result.notes }));
    } else {
      const notes = result.notes.map((n) => `  (${n.op}: ${n.reason})`).join('\n');
      io.out(describe(fileLine(info), result.findings, {}) + (notes ? `\nNot reported:\n${notes}` : ''));
    }
    return 0;
  });
}

/** "path — BWF, 48000 Hz, 2 ch, 24-bit int, 0:00:24.000". */
function fileLine(info: FileInfo): string {
  return `${info.path} — ${info.format}, ${info.sampleRateHz} Hz, ${info.channels} ch, ${info.bitsPerSample}-bit ${info.sampleFormat}, ${clock(info.durationSeconds)}`;
}

/** Seconds as h:mm:ss.mmm. */
export function clock(seconds: number): string {
  const ms = Math.round(seconds * 1000);
  const h = Math.floor(ms / 3600000), m = Math.floor((ms % 3600000) / 60000), s = Math.floor((ms % 60000) / 1000);
  return `${h}:${String(m).padStart(2, '0')}:${String(s).padStart(2, '0')}.${String(ms % 1000).padStart(3, '0')}`;
}

/** Findings first (plain sentences and the command that would fix each), then the numbers. */
function describe(heading: string, findings: readonly Finding[], numbers: Record<string, unknown>): string {
  const lines = [heading];
  const filePath = heading.split(' — ')[0]!;
  for (const f of findings) {
    const mark = { ok: '  ok  ', info: '  ·   ', warn: '  !   ', fail: '  ✗   ' }[f.severity];
    lines.push(`${mark}${f.sentence}${f.confidence !== undefined ? ` (confidence ${f.confidence.toFixed(2)})` : ''}`);
    if (f.suggestion) lines.push(`        fix: ${suggestionCommand(filePath, f.suggestion)}`);
  }
  const body = humanize(Object.fromEntries(Object.entries(numbers).filter(([, v]) => v !== undefined)));
  return body ? `${lines.join('\n')}\n${body}` : lines.join('\n');
}

function paramLines(specs: readonly ParamSpec[]): string[] {
  return specs.map((s) => {
    const value = s.type === 'boolean' ? '' : s.type === 'enum' ? ` ${s.choices?.join('|')}` : s.type === 'range' ? ' MIN:MAX' : s.type === 'list' ? ' A,B,…' : ' N';
    const bounds = s.min !== undefined || s.max !== undefined ? ` [${s.min ?? ''}…${s.max ?? ''}${s.unit ? ' ' + s.unit : ''}]` : s.unit ? ` [${s.unit}]` : '';
    const def = s.default !== undefined ? ` (default ${Array.isArray(s.default) ? s.default.join(',') : String(s.default)})` : '';
    return `  --${s.flag}${value}`.padEnd(30) + ` ${s.help}${bounds}${def}`;
  });
}

function verbHelp(op: Operation): string {
  const usage = op.kind === 'analysis' ? `reelwright ${op.name} FILE [options]` : `reelwright ${op.name} IN OUT [options]`;
  const lines = [usage, '', op.summary, ''];
  if (op.params.length) lines.push('Options:', ...paramLines(op.params));
  if (op.kind === 'analysis') {
    if ((op as AnalysisOp).render) lines.push(`  --out FILE.svg|FILE.csv`.padEnd(30) + ' Also write the result as a plot or a table.');
    if ((op as AnalysisOp).compare) lines.push(`  --compare OTHER`.padEnd(30) + ' Measure OTHER too and print the difference (before/after).');
    lines.push(`  --json`.padEnd(30) + ` Print one JSON object: { "file": {…}, "${(op as AnalysisOp).key}": {…} }.`);
  } else {
    lines.push('Output file:', ...paramLines(OUTPUT_FLAGS));
    lines.push(`  --json`.padEnd(30) + ' Print the parameters used and, where the correction has one, the measurement before and after.');
    lines.push('', 'The source is only read; OUT is written to a temporary file and renamed when complete.');
  }
  lines.push(`  --quiet`.padEnd(30) + ' No progress line.');
  return lines.join('\n');
}

function generalHelp(): string {
  const a = operations.filter((o) => o.kind === 'analysis');
  const c = operations.filter((o) => o.kind === 'correction');
  const row = (name: string, summary: string) => `  ${name.padEnd(12)} ${summary}`;
  return [
    'reelwright — find and fix speed, echo, azimuth and other transfer faults in recordings.',
    '',
    'Analyses (read only):  reelwright VERB FILE [--json]',
    ...a.map((o) => row(o.name, o.summary)),
    ...Object.entries(BUILTINS).map(([n, b]) => row(n, b.summary)),
    '',
    'Corrections (write a new file; the source is never modified):  reelwright VERB IN OUT [options]',
    ...c.map((o) => row(o.name, o.summary)),
    '',
    'Every verb takes --help. Exit status: 0 ok, 1 a check threshold was crossed, 2 bad usage or unreadable input',
    '(or OUT exists without --overwrite), 3 internal error (the file is named), 130/143 interrupted by Ctrl+C/SIGTERM',
    '(the unfinished output is removed).',
    'Caution: processed audio can be much louder than the original; lower your monitor level before listening.',
  ].join('\n');
}
