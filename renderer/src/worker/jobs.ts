/** The worker's analysis jobs, all driven by the operation registry. */
import { CancelledError, NotFoundError } from '../../../dsp/errors.ts';
import { validateParams } from '../../../dsp/ops/params.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import { mapTime } from '../../../dsp/ops/timing.ts';
import type { AnalysisOp, CorrectionOp, OpContext } from '../../../dsp/ops/types.ts';
import { analyseEcho, type EchoAnalysis } from '../../../dsp/echo/detect.ts';
import type { SpeedResult } from '../../../dsp/speed/estimate.ts';
import type { AzimuthResult } from '../../../dsp/ops/azimuth.ts';
import { detectReversedChannels } from '../../../dsp/reverse/detect.ts';
import type { AudioSource } from '../../../dsp/source.ts';
import { MemorySource, readAll } from '../../../dsp/source.ts';
import {
  azimuthVerdict, durationVerdict, printThroughVerdict, reflectionVerdict, reversedVerdicts, speedVerdict, type VerdictRow,
} from '../lib/verdict.ts';
import { correctionOf, RangeSource, renderInMemory, type Progress, type StepReport } from './pipeline.ts';
import { programmeSpan } from './programme.ts';
import type { PreviewResult, Remeasure, StepSpec } from './protocol.ts';

export interface Processed {
  readonly source: AudioSource;
  /** Where the processed part starts on the editor's time line (the region's start in the original). */
  readonly offsetSeconds: number;
  /** The original region it was rendered from (for re-measuring); null when adopted by the view worker. */
  readonly region: AudioSource | null;
}

function rmsDbfs(s: Float64Array[]): number {
  let sum = 0, n = 0;
  for (const c of s) { for (let i = 0; i < c.length; i++) sum += c[i]! * c[i]!; n += c.length; }
  return 10 * Math.log10(sum / Math.max(1, n) + 1e-20);
}

/** Renders the enabled steps over a region held in memory. */
export async function preview(source: AudioSource, steps: StepSpec[], startFrame: number, endFrame: number, p: Progress): Promise<{ result: PreviewResult; processed: Processed }> {
  const warnings: string[] = [];
  const prog: Progress = { progress: (f, l) => p.progress(0.1 + 0.9 * f, l), warn: (m) => { warnings.push(m); p.warn(m); }, signal: p.signal };
  p.progress(0, 'Reading');
  const regionData = await readAll(source, { startFrame, endFrame });
  const region = new MemorySource(regionData, source.sampleRateHz);
  const offsetSeconds = startFrame / source.sampleRateHz;
  const chain = await renderInMemory(region, steps, prog, { offsetSeconds });
  const data = await readAll(chain.out);
  const processed: Processed = { source: new MemorySource(data, chain.out.sampleRateHz), offsetSeconds, region };
  const d = chain.mapDelay(0.01);
  return {
    processed,
    result: {
      startFrame,
      endFrame,
      sampleRateHz: chain.out.sampleRateHz,
      channels: data.map((c) => Float32Array.from(c)),
      resolved: chain.resolved,
      warnings,
      originalRmsDbfs: rmsDbfs(regionData),
      processedRmsDbfs: rmsDbfs(data),
      reports: chain.reports,
      segments: chain.segments,
      frequencyScale: d === null || d <= 0 ? null : 0.01 / d,
    },
  };
}

const secs = (frames: number, rate: number) => (frames / rate).toFixed(2);

async function runAnalysis<R>(name: string, s: AudioSource, ctx: OpContext): Promise<R | null> {
  const op = findOperation(name) as AnalysisOp<R> | undefined;
  if (!op || op.kind !== 'analysis') return null;
  try {
    return await op.run(s, validateParams(op.params, {}), ctx);
  } catch (err) {
    if (err instanceof NotFoundError) return null;
    throw err;
  }
}

/** Whether a varispeed step undoes a measured speed error (judged against the recorded speed) or applies a change. */
const undoesSpeed = (step: StepSpec) =>
  step.suggestedBy === 'speed' || ['undo', 'fromHum', 'fromTone', 'followCurve'].some((k) => step.params[k] !== undefined && step.params[k] !== false);

/**
 * One step measured again: the quantity it fixes, on its own input and on its own output, over the
 * material it acted on (its range; for a reflection, the programme without a line-up tone).
 */
async function judgeStep(k: number, step: StepSpec, op: CorrectionOp, input: AudioSource, output: AudioSource, rep: StepReport, p: Progress): Promise<Remeasure> {
  const ctx: OpContext = { progress: (f) => p.progress(f, `${op.title}: measuring again`), warn: () => {}, signal: p.signal };
  const inRate = input.sampleRateHz, outRate = output.sampleRateHz;
  const [a, b] = rep.rangeSeconds ? [Math.round(rep.rangeSeconds[0] * inRate), Math.round(rep.rangeSeconds[1] * inRate)] : [0, input.frames];
  // The same material in the output, through the step's own time map.
  const outFrames = (f: number) => Math.max(0, Math.min(output.frames, Math.round(mapTime(rep.segments, f / inRate) * outRate)));
  const window = (lo: number, hi: number) => {
    const x = outFrames(lo), y = outFrames(hi);
    return [Math.min(x, y), Math.max(x, y)] as const;
  };
  let inSrc: AudioSource = a === 0 && b === input.frames ? input : new RangeSource(input, a, b);
  const [oa, ob] = window(a, b);
  let outSrc: AudioSource = oa === 0 && ob === output.frames ? output : new RangeSource(output, oa, ob);
  let material = rep.rangeSeconds ? `the selection it acted on, ${secs(a, inRate)}–${secs(b, inRate)} s of its input` : `all of its input (${secs(input.frames, inRate)} s) and output`;
  const base: Omit<Remeasure, 'rows' | 'material'> = { stepIndex: k, op: op.name, title: op.title, analysis: op.measures ?? null, error: null };
  const rows: VerdictRow[] = [];
  try {
    switch (op.measures) {
      case 'speed': {
        const before = await runAnalysis<SpeedResult>('speed', inSrc, ctx), after = await runAnalysis<SpeedResult>('speed', outSrc, ctx);
        const none = { method: null } as SpeedResult;
        rows.push(speedVerdict(before ?? none, after ?? none, undoesSpeed(step) ? { undo: true } : { undo: false, factor: Number(rep.resolved.factor ?? 1) }));
        break;
      }
      case 'echo': {
        const prog = await programmeSpan(inSrc, p.signal);
        if (prog.tones.length) {
          const off = inSrc === input ? 0 : a;
          inSrc = new RangeSource(input, off + prog.startFrame, off + prog.endFrame);
          const [pa, pb] = window(off + prog.startFrame, off + prog.endFrame);
          outSrc = new RangeSource(output, pa, pb);
          material = `the programme of ${rep.rangeSeconds ? 'the selection' : 'its input'}, ${secs(off + prog.startFrame, inRate)}–${secs(off + prog.endFrame, inRate)} s ` +
            `(a steady tone at ${prog.tones.map(([x, y]) => `${secs(off + x, inRate)}–${secs(off + y, inRate)} s`).join(', ')} left out: it never had the reflection)`;
        } else material = `the programme, ${material}`;
        const opts = { signal: p.signal, progress: ctx.progress };
        const before: EchoAnalysis = await analyseEcho(inSrc, opts);
        const after: EchoAnalysis = await analyseEcho(outSrc, opts);
        const rb = before.reflection;
        const cancelledPre = Number(rep.resolved.delaySeconds) < 0 || rep.resolved.preEchoDelaySeconds !== undefined;
        const cancelledPost = Number(rep.resolved.delaySeconds) > 0;
        if (cancelledPost || rb.present || !cancelledPre) {
          let near: EchoAnalysis | null = null;
          if (rb.present && rb.delaySeconds !== null) {
            const lo = Math.max(0.0005, rb.delaySeconds * 0.9), hi = Math.min(0.5, rb.delaySeconds * 1.1);
            near = await analyseEcho(outSrc, { ...opts, rangeSeconds: [lo, hi], printThrough: false });
          }
          rows.push(reflectionVerdict(before, near, after));
        }
        if (cancelledPre || before.printThrough.present) rows.push(printThroughVerdict(before, after));
        break;
      }
      case 'azimuth': {
        const before = await runAnalysis<AzimuthResult>('azimuth', inSrc, ctx), after = await runAnalysis<AzimuthResult>('azimuth', outSrc, ctx);
        if (before && after) rows.push(azimuthVerdict(before, after));
        break;
      }
      case 'reversed': {
        const chs = Array.isArray(rep.resolved.channels) ? (rep.resolved.channels as number[]) : Array.from({ length: input.channelCount }, (_, i) => i + 1);
        const from = Number(rep.resolved.startFrame ?? 0), to = Number(rep.resolved.endFrame ?? inSrc.frames);
        // Only the part it reversed: the same frames before and after (reverse keeps its range in place).
        const span = (s: AudioSource) => (from > 0 || to < s.frames ? new RangeSource(s, from, Math.min(s.frames, to)) : s);
        const before = await detectReversedChannels(span(inSrc), ctx.progress), after = await detectReversedChannels(span(outSrc), ctx.progress);
        rows.push(...reversedVerdicts(before, after, chs, step.suggestedBy === 'reversed'));
        if (from > 0 || to < inSrc.frames) material = `the part it reversed, ${secs(from, inRate)}–${secs(to, inRate)} s of its input, channel${chs.length === 1 ? '' : 's'} ${chs.join(', ')}`;
        else material = `channel${chs.length === 1 ? '' : 's'} ${chs.join(', ')}, ${material}`;
        break;
      }
      default:
        break;
    }
    const dIn = inSrc.frames / inRate, dOut = outSrc.frames / outRate;
    if (op.measures !== 'reversed' && Math.abs(dOut / dIn - 1) > 1e-4) {
      const expected = op.name === 'stretch' ? Number(rep.resolved.ratio) : op.name === 'varispeed' && Number(rep.resolved.factor) > 0 ? 1 / Number(rep.resolved.factor) : null;
      rows.push(durationVerdict(dIn, dOut, expected));
    }
  } catch (err) {
    if (p.signal.aborted) throw new CancelledError('cancelled');
    return { ...base, rows, material, error: err instanceof Error ? err.message : String(err) };
  }
  return { ...base, rows, material };
}

/**
 * Renders the steps over the region again, one by one, and measures each on its own input and
 * output (never the region against the end of the chain: a later step must not hide or fake an
 * earlier one's result). Holds at most two stages at a time.
 */
export async function remeasure(region: AudioSource, offsetSeconds: number, steps: StepSpec[], p: Progress): Promise<Remeasure[]> {
  const out: Remeasure[] = [];
  const share = (k: number): Progress => ({ progress: (f, l) => p.progress((k + Math.min(1, f)) / Math.max(1, steps.length), l), warn: p.warn, signal: p.signal });
  await renderInMemory(region, steps, { progress: () => {}, warn: () => {}, signal: p.signal }, {
    offsetSeconds,
    onStep: async (k, input, output, rep) => {
      out.push(await judgeStep(k, steps[k]!, correctionOf(rep.op), input, output, rep, share(k)));
    },
  });
  return out;
}
