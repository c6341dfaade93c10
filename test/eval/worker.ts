/**
 * A child process of `npm run eval`: reads one JSON task per line on stdin, answers one JSON line
 * per task on stdout. `diagnose` runs every analysis with default settings, as a new user would.
 */
import readline from 'node:readline';
import { openAudio } from '../../main/io/reader.ts';
import { diagnose } from '../../dsp/ops/diagnose.ts';
import { findOperation } from '../../dsp/ops/registry.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { collectBlocks, readAll } from '../../dsp/source.ts';
import type { ParamValues } from '../../dsp/ops/types.ts';
import type { ClipResult, CorrectionResult } from './types.ts';
import { numbersToJson } from './pool.ts';
import { bandDeviationDb, echoReductionDb, monoMix, offsetTrack, residualSpeedPercent } from './measures.ts';
import { comparePartials, envelopeDeviationDb, findHits, longTermEnvelopeDeviationDb, readOnsets } from './stretch-measures.ts';

export interface DiagnoseTask {
  task: 'diagnose';
  id: string;
  file: string;
  params?: Record<string, Record<string, unknown>>;
  /** Only these analysis verbs. */
  only?: string[];
}

async function run(t: DiagnoseTask): Promise<ClipResult> {
  const c0 = process.cpuUsage();
  const cpu = () => { const c = process.cpuUsage(c0); return (c.user + c.system) / 1e6; };
  let file;
  try {
    file = await openAudio(t.file);
    const r = await diagnose(file, { progress() {}, warn() {} }, { params: t.params as never, only: t.only });
    return { id: t.id, sections: r.sections, findings: r.findings, notes: r.notes, cpuSeconds: cpu() };
  } catch (e) {
    return { id: t.id, sections: {}, findings: [], notes: [], cpuSeconds: cpu(), error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) };
  } finally {
    await file?.close().catch(() => {});
  }
}

export interface CorrectTask {
  task: 'correct';
  /** Clip id and correction, e.g. `reflection-000-voice-kal-0 unecho`. */
  id: string;
  file: string;
  referenceFile: string;
  op: string;
  params: ParamValues;
  /** What to measure against the reference. */
  measure: 'echo' | 'speed' | 'partials' | 'onsets' | 'formants';
}

async function correct(t: CorrectTask): Promise<CorrectionResult> {
  const c0 = process.cpuUsage();
  const cpu = () => { const c = process.cpuUsage(c0); return (c.user + c.system) / 1e6; };
  const warnings: string[] = [];
  let file, ref;
  try {
    const op = findOperation(t.op);
    if (!op || op.kind !== 'correction') throw new Error(`${t.op} is not a correction`);
    file = await openAudio(t.file);
    ref = await openAudio(t.referenceFile);
    const rendering = await op.prepare(file, validateParams(op.params, t.params), { progress() {}, warn: (m) => warnings.push(m) });
    const output = monoMix(await collectBlocks(rendering.blocks, rendering.channelCount));
    const reference = monoMix(await readAll(ref));
    const rate = rendering.sampleRateHz;
    const metrics: Record<string, number> = {};
    if (t.measure === 'echo') {
      const input = monoMix(await readAll(file));
      metrics.reductionDb = echoReductionDb(input, output, reference);
      metrics.bandDeviationDb = bandDeviationDb(output, reference, rate, 50, Math.min(16000, 0.45 * rate));
      metrics.inputBandDeviationDb = bandDeviationDb(input, reference, rate, 50, Math.min(16000, 0.45 * rate));
      // 1 when what unecho names first (the strongest echo it cancelled) is a reflection.
      metrics.reflectionFirst = /^reflection /.test(String(rendering.resolved.cancelled ?? '')) ? 1 : 0;
    } else if (t.measure === 'partials' || t.measure === 'onsets' || t.measure === 'formants') {
      // The clean clip is its own reference: its partials, hits and envelope, mapped.
      const ratio = t.op === 'stretch' ? Number(t.params.ratio) : 1;
      const factor = t.op === 'transpose' ? 2 ** ((Number(t.params.semitones ?? 0) * 100 + Number(t.params.cents ?? 0)) / 1200) : 1;
      if (t.measure === 'partials') {
        const from = Math.round(0.6 * rate);
        const len = Math.min(Math.round(2.5 * rate), reference.length - from - Math.round(0.6 * rate));
        const yFrom = Math.round(ratio * (from + len / 2) - len / 2);
        const r = comparePartials(reference, output, rate, from, yFrom, len, factor, 5000, 12, ratio);
        metrics.worstCents = r.worstCents;
        metrics.worstLevelDb = r.worstLevelDb;
        metrics.newLineDb = r.newLineDb;
        metrics.newLineHz = r.newLineHz;
        metrics.partials = r.partials;
      } else if (t.measure === 'onsets') {
        const hits = findHits(reference, rate).filter((h) => h > 0.06 * rate && ratio * h < output.length - 0.05 * rate);
        const o = readOnsets(reference, output, rate, hits, ratio);
        const quietBefore = o.filter((q) => q.preEchoDb - q.preEchoRiseDb <= -30);
        metrics.hits = o.length;
        metrics.onsetErrorMs = Math.max(...o.map((q) => Math.abs(q.errorMs)));
        metrics.preEchoDb = quietBefore.length ? Math.max(...quietBefore.map((q) => q.preEchoDb)) : NaN;
        metrics.preEchoRiseDb = Math.max(...o.map((q) => q.preEchoRiseDb));
        metrics.attackDb = Math.min(...o.map((q) => q.attackDb));
      } else {
        metrics.envelopeDb = envelopeDeviationDb(reference, output, rate, factor);
        // The long-term measure used before (not the bar; for comparison).
        metrics.longTermEnvelopeDb = longTermEnvelopeDeviationDb(reference, output, rate, factor);
      }
    } else {
      const track = offsetTrack(output, reference, rate);
      const res = residualSpeedPercent(track);
      const abs = res.percent.map(Math.abs);
      const end = res.times.length ? res.times[res.times.length - 1]! : 0;
      const edges = abs.filter((_, i) => res.times[i]! < 2.5 || res.times[i]! > end - 2);
      metrics.maxPercent = abs.length ? Math.max(...abs) : NaN;
      metrics.edgeMaxPercent = edges.length ? Math.max(...edges) : NaN;
      metrics.windows = abs.length;
      metrics.lengthRatio = output.length / reference.length;
    }
    // NaN and ±Infinity travel by name (as null a missing partial would pass and "no new line" fail).
    return { id: t.id, metrics: numbersToJson(metrics) as unknown as Record<string, number>, resolved: rendering.resolved as Record<string, unknown>, warnings, cpuSeconds: cpu() };
  } catch (e) {
    return { id: t.id, metrics: {}, resolved: {}, warnings, cpuSeconds: cpu(), error: e instanceof Error ? `${e.name}: ${e.message}` : String(e) };
  } finally {
    await file?.close().catch(() => {});
    await ref?.close().catch(() => {});
  }
}

const rl = readline.createInterface({ input: process.stdin });
for await (const line of rl) {
  if (!line.trim()) continue;
  const t = JSON.parse(line) as DiagnoseTask | CorrectTask;
  process.stdout.write(JSON.stringify(t.task === 'correct' ? await correct(t) : await run(t)) + '\n');
}
