/**
 * Runs the step list through the operation registry: every enabled step is a CorrectionOp looked
 * up by name, its parameters validated by the same code as the command line.
 *
 * Each step gets the parameters that are valid where it sits (dsp/ops/timing.ts): values measured
 * on the original recording (a reflection's delay, the delay between the channels, a position)
 * are carried across the steps before it that change time, or left out so the step measures them
 * on its own input. A step limited to part of the recording renders that part (with a margin
 * where it keeps time) and is spliced back with short crossfades.
 */
import { CancelledError, ParameterError } from '../../../dsp/errors.ts';
import { validateParams } from '../../../dsp/ops/params.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import {
  carryParams, chainAdvance, chainStart, changesTime, identitySegments, mapTime, stepTiming,
  type Carried, type ChainTiming,
} from '../../../dsp/ops/timing.ts';
import type { CorrectionOp, OpContext, ParamValues, Rendering, SourceFacts, StepTiming, TimeSegment } from '../../../dsp/ops/types.ts';
import type { AudioSource, Block, BlockOptions } from '../../../dsp/source.ts';
import { MemorySource, resolveRange } from '../../../dsp/source.ts';
import type { StepSpec } from './protocol.ts';

export function correctionOf(name: string): CorrectionOp {
  const op = findOperation(name);
  if (!op || op.kind !== 'correction') throw new ParameterError(`no correction named "${name}"`);
  return op;
}

export interface Progress {
  progress(fraction: number, label: string): void;
  warn(message: string): void;
  readonly signal: { readonly aborted: boolean };
}

const check = (signal: { aborted: boolean }) => {
  if (signal.aborted) throw new CancelledError('cancelled');
};

function stepContext(p: Progress, k: number, n: number, share: number, offset: number, label: string): OpContext {
  return {
    progress: (f) => p.progress((k + offset + share * Math.min(1, Math.max(0, f))) / n, label),
    warn: (m) => p.warn(`${label}: ${m}`),
    signal: p.signal,
  };
}

/** Length of the crossfades at the edges of a step limited to part of the recording. */
export const RANGE_FADE_SECONDS = 0.01;
/** Material read on each side of the range by a step that keeps time (its filters settle in it). */
export const RANGE_MARGIN_SECONDS = 0.5;

/** What one step was given and did, for the step cards, the history and re-measuring. */
export interface StepReport {
  readonly op: string;
  readonly title: string;
  /** The parameters it ran with, after carrying (before its own measurements). */
  readonly applied: ParamValues;
  /** What it measured and used. */
  readonly resolved: ParamValues;
  /** Values carried from the original recording's time to where the step runs. */
  readonly carried: readonly Carried[];
  /** The range of its input it acted on (seconds), or null for all of it. */
  readonly rangeSeconds: readonly [number, number] | null;
  /** The BWF CodingHistory text of the step. */
  readonly history: string;
  /** Its own map of input to output seconds. */
  readonly segments: readonly TimeSegment[];
}

export interface ChainOptions {
  /** Where the rendered source starts in the original recording (a preview of part of it). */
  readonly offsetSeconds?: number;
  /** Called after each step with its input and output (re-measuring keeps only what it needs). */
  readonly onStep?: (k: number, input: AudioSource, output: AudioSource, report: StepReport) => Promise<void>;
}

export interface ChainResult {
  readonly out: AudioSource;
  /** Per step, what each resolved (kept for older callers). */
  readonly resolved: ParamValues[];
  readonly reports: StepReport[];
  /** Original seconds (from the start of the recording) → seconds of the output. */
  readonly segments: readonly TimeSegment[];
  /** What a lag of the original lasts in the output (null: it does not survive as one lag). */
  readonly mapDelay: ChainTiming['mapDelay'];
}

const factsOf = (s: AudioSource): SourceFacts => ({ sampleRateHz: s.sampleRateHz, channelCount: s.channelCount, frames: s.frames });

/** A window [start, end) of another source, as a source of its own. */
export class RangeSource implements AudioSource {
  constructor(private readonly inner: AudioSource, readonly start: number, readonly end: number) {}
  get sampleRateHz() { return this.inner.sampleRateHz; }
  get channelCount() { return this.inner.channelCount; }
  get frames() { return this.end - this.start; }
  blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [s, e] = resolveRange(this, options);
    return this.inner.blocks({ ...options, startFrame: this.start + s, endFrame: this.start + e });
  }
}

async function readRange(src: AudioSource, start: number, end: number): Promise<Float64Array[]> {
  const out = Array.from({ length: src.channelCount }, () => new Float64Array(Math.max(0, end - start)));
  let at = 0;
  if (end > start) {
    for await (const b of src.blocks({ startFrame: start, endFrame: end })) {
      for (let c = 0; c < out.length; c++) out[c]!.set(b[c]!, at);
      at += b[0]!.length;
    }
  }
  return out;
}

/**
 * Input outside [a, b), the processed blocks inside: the first and last `fade` frames of the
 * processed part crossfade (raised cosine, gains summing to 1) with the unprocessed input aligned
 * at the range's start and end. `skip` frames of the processed stream are dropped first, and at
 * most `keep` are used (a step that keeps time rendered with margins).
 */
async function* spliced(input: AudioSource, processed: AsyncIterable<Block>, a: number, b: number, fade: number, skip: number, keep: number): AsyncIterable<Block> {
  const nCh = input.channelCount;
  yield* input.blocks({ startFrame: 0, endFrame: a });
  const head = await readRange(input, a, Math.min(b, a + fade));
  const tail = await readRange(input, Math.max(a, b - fade), b);
  const F = head[0]!.length, T = tail[0]!.length;
  // The last T processed frames wait until the end is known.
  let held: Float64Array[] = Array.from({ length: nCh }, () => new Float64Array(0));
  let emitted = 0, dropped = 0, used = 0;
  const headGain = (j: number) => (j < F ? 0.5 - 0.5 * Math.cos((Math.PI * (j + 0.5)) / F) : 1);
  for await (const blk of processed) {
    let piece = blk;
    const n = piece[0]?.length ?? 0;
    if (dropped < skip) {
      const d = Math.min(n, skip - dropped);
      dropped += d;
      piece = piece.map((c) => c.subarray(d));
    }
    const room = keep - used;
    if (room <= 0) break;
    if ((piece[0]?.length ?? 0) > room) piece = piece.map((c) => c.subarray(0, room));
    const m = piece[0]?.length ?? 0;
    if (m === 0) continue;
    used += m;
    const joined = held.map((h, c) => { const x = new Float64Array(h.length + m); x.set(h); x.set(piece[c]!, h.length); return x; });
    const out = Math.max(0, joined[0]!.length - T);
    if (out > 0) {
      const block = joined.map((x) => x.slice(0, out));
      for (let j = 0; j < out && emitted + j < F; j++) {
        const w = headGain(emitted + j);
        for (let c = 0; c < nCh; c++) block[c]![j] = w * block[c]![j]! + (1 - w) * head[c]![emitted + j]!;
      }
      emitted += out;
      yield block;
    }
    held = joined.map((x) => x.slice(out));
  }
  const h = held[0]!.length;
  if (h > 0) {
    const block = held.map((x) => x.slice());
    for (let k = 0; k < h; k++) {
      const kt = T - h + k;
      const wt = kt >= 0 ? 0.5 + 0.5 * Math.cos((Math.PI * (kt + 0.5)) / T) : 1;
      const w = Math.min(wt, headGain(emitted + k));
      for (let c = 0; c < nCh; c++) {
        const u = kt >= 0 ? tail[c]![kt]! : head[c]![emitted + k] ?? 0;
        block[c]![k] = w * block[c]![k]! + (1 - w) * u;
      }
    }
    yield block;
  }
  yield* input.blocks({ startFrame: b, endFrame: input.frames });
}

/**
 * Prepares one step over its input, or over `rangeFrames` of it with the rest passed through.
 * `keepsTime` says whether the step keeps every instant in place (then it is rendered with
 * margins around the range and trimmed back).
 */
async function prepareStep(op: CorrectionOp, input: AudioSource, params: ParamValues, rangeFrames: readonly [number, number] | null, ctx: OpContext): Promise<Rendering> {
  if (!rangeFrames) return op.prepare(input, params, ctx);
  const [a, b] = rangeFrames;
  const rate = input.sampleRateHz;
  const keepsTime = changesTime(op, params, factsOf(input)) === false;
  const margin = keepsTime ? Math.round(RANGE_MARGIN_SECONDS * rate) : 0;
  const a0 = Math.max(0, a - margin), b0 = Math.min(input.frames, b + margin);
  const r = await op.prepare(new RangeSource(input, a0, b0), params, ctx);
  if (r.sampleRateHz !== rate || r.channelCount !== input.channelCount) {
    throw new ParameterError(`${op.title}: a change of sample rate or channels applies to the whole recording, not to a selection`);
  }
  const inner = r.framesHint ?? b0 - a0;
  const keep = keepsTime ? b - a : inner;
  const fade = Math.max(1, Math.min(Math.round(RANGE_FADE_SECONDS * rate), Math.floor((b - a) / 4), Math.floor(keep / 4)));
  return {
    sampleRateHz: rate,
    channelCount: input.channelCount,
    framesHint: input.frames - (b - a) + keep,
    blocks: spliced(input, r.blocks, a, b, fade, a - a0, keep),
    resolved: r.resolved,
  };
}

/** The step's range in its input's frames (from original seconds through the chain so far), or null. */
function rangeOf(step: StepSpec, chain: ChainTiming, input: AudioSource, title: string): readonly [number, number] | null | 'outside' {
  const r = step.rangeSeconds;
  if (!r) return null;
  const x = mapTime(chain.segments, r[0]), y = mapTime(chain.segments, r[1]);
  const rate = input.sampleRateHz;
  const a = Math.max(0, Math.round(Math.min(x, y) * rate)), b = Math.min(input.frames, Math.round(Math.max(x, y) * rate));
  if (b - a < Math.round(0.02 * rate)) {
    if (Math.max(x, y) * rate <= 0 || Math.min(x, y) * rate >= input.frames) return 'outside';
    throw new ParameterError(`${title}: its selection is shorter than 20 ms`);
  }
  return [a, b];
}

/** Validated, carried parameters of step k and its range. */
function stepPlan(step: StepSpec, chain: ChainTiming, input: AudioSource) {
  const op = correctionOf(step.op);
  const { params, carried } = carryParams(op, step.params, chain, { basis: step.basis, measureHere: step.measureHere });
  const applied = validateParams(op.params, params);
  return { op, applied, carried, range: rangeOf(step, chain, input, op.title) };
}

function report(op: CorrectionOp, applied: ParamValues, r: Rendering, carried: Carried[], range: readonly [number, number] | null, input: AudioSource, segments: readonly TimeSegment[]): StepReport {
  const rate = input.sampleRateHz;
  const rangeSeconds = range ? ([range[0] / rate, range[1] / rate] as const) : null;
  let history = op.history({ ...applied, ...r.resolved });
  if (rangeSeconds) history += ` (only ${rangeSeconds[0].toFixed(3)}–${rangeSeconds[1].toFixed(3)} s, ${(RANGE_FADE_SECONDS * 1000).toFixed(0)} ms crossfades)`;
  return { op: op.name, title: op.title, applied, resolved: r.resolved, carried, rangeSeconds, history, segments };
}

const keptTime = (s: AudioSource): StepTiming => ({ segments: identitySegments(s.frames / s.sampleRateHz), mapDelay: (d) => d });
const passThrough = (s: AudioSource): Rendering => ({ sampleRateHz: s.sampleRateHz, channelCount: s.channelCount, framesHint: s.frames, blocks: s.blocks(), resolved: {} });

/** Renders the steps one after another into memory (previews and short files). */
export async function renderInMemory(source: AudioSource, steps: readonly StepSpec[], p: Progress, options: ChainOptions = {}): Promise<ChainResult> {
  let current = source;
  let chain = chainStart(source.frames / source.sampleRateHz, options.offsetSeconds ?? 0);
  const resolved: ParamValues[] = [];
  const reports: StepReport[] = [];
  for (let k = 0; k < steps.length; k++) {
    const plan = stepPlan(steps[k]!, chain, current);
    const { op, applied, carried } = plan;
    const range = plan.range === 'outside' ? null : plan.range;
    const rendering = plan.range === 'outside'
      ? passThrough(current)
      : await prepareStep(op, current, applied, range, stepContext(p, k, steps.length, 0.3, 0, op.title));
    check(p.signal);
    const channels = await collect(rendering, stepContext(p, k, steps.length, 0.7, 0.3, op.title), p.signal);
    const out = new MemorySource(channels, rendering.sampleRateHz);
    const timing = plan.range === 'outside'
      ? keptTime(current)
      : stepTiming(op, rendering.resolved, factsOf(current), range ? [range[0] / current.sampleRateHz, range[1] / current.sampleRateHz] : null);
    const rep = report(op, applied, rendering, carried, range, current, timing.segments);
    chain = chainAdvance(chain, op.title, timing);
    resolved.push(rendering.resolved);
    reports.push(rep);
    if (options.onStep) await options.onStep(k, current, out, rep);
    current = out;
  }
  return { out: current, resolved, reports, segments: chain.segments, mapDelay: chain.mapDelay };
}

async function collect(r: Rendering, ctx: OpContext, signal: { aborted: boolean }): Promise<Float64Array[]> {
  const parts: Block[] = [];
  let total = 0;
  for await (const b of r.blocks) {
    check(signal);
    parts.push(b);
    total += b[0]?.length ?? 0;
    if (r.framesHint) ctx.progress(total / r.framesHint);
  }
  const out = Array.from({ length: r.channelCount }, () => new Float64Array(total));
  let at = 0;
  for (const b of parts) {
    for (let c = 0; c < r.channelCount; c++) out[c]!.set(b[c]!, at);
    at += b[0]?.length ?? 0;
  }
  return out;
}

/**
 * A step's output as a re-readable source without holding it: each pass prepares the step again
 * with the parameters it resolved the first time. Needs the step to announce its length.
 */
class StepSource implements AudioSource {
  constructor(private readonly again: () => Promise<Rendering>, private readonly title: string, private readonly first: Rendering) {
    if (first.framesHint === undefined) throw new ParameterError(`${title} does not say how long its output is, so it cannot be chained on a long file`);
  }
  get sampleRateHz() { return this.first.sampleRateHz; }
  get channelCount() { return this.first.channelCount; }
  get frames() { return this.first.framesHint!; }
  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const r = await this.again();
    let at = 0;
    const wanted: Block[] = [];
    for await (const b of r.blocks) {
      const len = b[0]?.length ?? 0;
      const lo = Math.max(start, at), hi = Math.min(end, at + len);
      if (hi > lo) {
        const piece = b.map((x) => x.subarray(lo - at, hi - at));
        if (options.reverse) wanted.push(piece.map((x) => x.slice()));
        else yield piece.map((x) => x.slice());
      }
      at += len;
      if (at >= end) break;
    }
    if (options.reverse) for (const piece of wanted.reverse()) yield piece.map((x) => x.slice().reverse());
  }
}

/** The last step's rendering over a long source, earlier steps chained as re-readable sources. */
export async function streamingRendering(source: AudioSource, steps: readonly StepSpec[], p: Progress): Promise<{ rendering: Rendering; resolved: ParamValues[]; reports: StepReport[]; segments: readonly TimeSegment[] }> {
  let current = source;
  let chain = chainStart(source.frames / source.sampleRateHz);
  const resolved: ParamValues[] = [];
  const reports: StepReport[] = [];
  let last: Rendering | null = null;
  for (let k = 0; k < steps.length; k++) {
    const plan = stepPlan(steps[k]!, chain, current);
    const { op, applied, carried } = plan;
    const range = plan.range === 'outside' ? null : plan.range;
    const input = current;
    const r = plan.range === 'outside' ? passThrough(input) : await prepareStep(op, input, applied, range, stepContext(p, k, steps.length, 1, 0, op.title));
    check(p.signal);
    const timing = plan.range === 'outside'
      ? keptTime(input)
      : stepTiming(op, r.resolved, factsOf(input), range ? [range[0] / input.sampleRateHz, range[1] / input.sampleRateHz] : null);
    reports.push(report(op, applied, r, carried, range, input, timing.segments));
    chain = chainAdvance(chain, op.title, timing);
    resolved.push(r.resolved);
    last = r;
    if (k < steps.length - 1) {
      const again = plan.range === 'outside'
        ? async () => passThrough(input)
        : () => prepareStep(op, input, { ...applied, ...r.resolved }, range, { progress() {}, warn() {} });
      current = new StepSource(again, op.title, r);
    }
  }
  if (!last) last = passThrough(current);
  return { rendering: last, resolved, reports, segments: chain.segments };
}
