/**
 * Runs the step list through the operation registry: every enabled step is a CorrectionOp looked
 * up by name, its parameters validated by the same code as the command line.
 */
import { CancelledError, ParameterError } from '../../../dsp/errors.ts';
import { validateParams } from '../../../dsp/ops/params.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import type { CorrectionOp, OpContext, ParamValues, Rendering } from '../../../dsp/ops/types.ts';
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

/** Renders the steps one after another into memory (previews and short files). */
export async function renderInMemory(source: AudioSource, steps: readonly StepSpec[], p: Progress): Promise<{ out: AudioSource; resolved: ParamValues[] }> {
  let current = source;
  const resolved: ParamValues[] = [];
  for (let k = 0; k < steps.length; k++) {
    const op = correctionOf(steps[k]!.op);
    const params = validateParams(op.params, steps[k]!.params);
    const rendering = await op.prepare(current, params, stepContext(p, k, steps.length, 0.3, 0, op.title));
    check(p.signal);
    const channels = await collect(rendering, stepContext(p, k, steps.length, 0.7, 0.3, op.title), p.signal);
    current = new MemorySource(channels, rendering.sampleRateHz);
    resolved.push(rendering.resolved);
  }
  return { out: current, resolved };
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
  constructor(private readonly op: CorrectionOp, private readonly upstream: AudioSource, private readonly params: ParamValues, private readonly first: Rendering) {
    if (first.framesHint === undefined) throw new ParameterError(`${op.title} does not say how long its output is, so it cannot be chained on a long file`);
  }
  get sampleRateHz() { return this.first.sampleRateHz; }
  get channelCount() { return this.first.channelCount; }
  get frames() { return this.first.framesHint!; }
  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const r = await this.op.prepare(this.upstream, this.params, { progress() {}, warn() {} });
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
export async function streamingRendering(source: AudioSource, steps: readonly StepSpec[], p: Progress): Promise<{ rendering: Rendering; resolved: ParamValues[] }> {
  let current = source;
  const resolved: ParamValues[] = [];
  let last: Rendering | null = null;
  for (let k = 0; k < steps.length; k++) {
    const op = correctionOf(steps[k]!.op);
    const params = validateParams(op.params, steps[k]!.params);
    const r = await op.prepare(current, params, stepContext(p, k, steps.length, 1, 0, op.title));
    check(p.signal);
    resolved.push(r.resolved);
    last = r;
    if (k < steps.length - 1) current = new StepSource(op, current, { ...params, ...r.resolved }, r);
  }
  if (!last) {
    const src = current;
    last = { sampleRateHz: src.sampleRateHz, channelCount: src.channelCount, framesHint: src.frames, blocks: src.blocks(), resolved: {} };
  }
  return { rendering: last, resolved };
}
