/**
 * `unecho`: removes one reflection and/or print-through with the exact inverse of the echo model
 * y = x + g·x(t − τ): x̂[n] = y[n] − g·x̂[n − τ] with a windowed-sinc fractional delay on the
 * feedback path; a pre-echo (τ < 0) runs the same recursion on the time-reversed signal.
 * With --delay and --gain the echo is given by hand; with --delay alone the gain is measured at
 * that delay; with neither, `echo` measures and everything it reports as present is cancelled,
 * the strongest first (it is named first in the output), and what it found but could not decide
 * is listed as left.
 * Method and memory use: dsp/echo/render.ts.
 */
import { gainToDb } from '../units.ts';
import type { CancelPlan } from '../echo/render.ts';
import { NotFoundError, ParameterError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import { defineCorrection, type OpContext, type ParamValues } from './types.ts';

const algorithms = async () => {
  const [{ analyseEcho }, { singleEchoKernel }, { MAX_CANCEL_GAIN, refineSingleEcho }, { renderCancellation }, { tailGain, tailGainAgrees }] = await Promise.all([
    import('../echo/detect.ts'), import('../echo/kernel.ts'), import('../echo/refine.ts'), import('../echo/render.ts'), import('../echo/tail-gain.ts'),
  ]);
  return { analyseEcho, singleEchoKernel, MAX_CANCEL_GAIN, refineSingleEcho, renderCancellation, tailGain, tailGainAgrees };
};

interface EchoToCancel {
  kind: 'reflection' | 'print-through';
  delaySeconds: number;
  gain: number;
  source: 'given' | 'measured';
  /** A measured frequency-dependent reflection, used instead of the single gain. */
  filter?: { firstTapSamples: number; taps: number[] };
}

function clampGain(g: number, ctx: OpContext, MAX_CANCEL_GAIN: number): number {
  if (Math.abs(g) > MAX_CANCEL_GAIN) {
    ctx.warn(`gain ${g.toFixed(4)} is too close to 1 for a stable inverse: cancelling with ${Math.sign(g) * MAX_CANCEL_GAIN} instead`);
    return Math.sign(g) * MAX_CANCEL_GAIN;
  }
  return g;
}

/** Measures the gain of an echo at a given delay (refined around it). */
async function measureAt(source: AudioSource, delaySeconds: number, channel: number, ctx: OpContext): Promise<number> {
  const { analyseEcho, refineSingleEcho, tailGain, tailGainAgrees } = await algorithms();
  const fs = source.sampleRateHz;
  if (delaySeconds < 0) {
    const a = await analyseEcho(source, { channel, warn: (m) => ctx.warn(m), signal: ctx.signal });
    const pt = a.printThrough;
    if (pt.delaySeconds === null || pt.gain === null || Math.abs(pt.delaySeconds - delaySeconds) > 0.002) {
      throw new NotFoundError(`no pre-echo found near ${delaySeconds} s; give --gain as well to cancel it by hand`);
    }
    return pt.gain;
  }
  const d = delaySeconds * fs;
  const n = Math.min(source.frames, Math.round(30 * fs));
  // The first pass starts from no cancellation (gain 0) and fits the delay within ±0.6 sample.
  const excerpt = { start: 0, end: n, warmup: 0 };
  const r = await refineSingleEcho(source, { delaySamples: d, gain: 0 }, { channel, excerpt, signal: ctx.signal, searchSamples: 0.6 });
  // Where the programme stops into silence the copy is alone for τ: read the gain there when it
  // can be (tail-gain.ts), as the automatic analysis does.
  const tail = r.fit.delaySamples >= 1 ? await tailGain(source, { delaySamples: r.fit.delaySamples, gain: r.fit.gain }, { channel, excerpt, signal: ctx.signal }) : null;
  return tail !== null && tailGainAgrees(tail, r.fit.gain) ? tail.gain : r.fit.gain;
}

export const unecho = defineCorrection({
  kind: 'correction',
  name: 'unecho',
  title: 'Remove echo',
  summary: 'Cancel one reflection or print-through (given with --delay/--gain, or measured) with the inverse of the echo.',
  measures: 'echo',
  params: [
    {
      name: 'delaySeconds',
      flag: 'delay',
      type: 'number',
      label: 'Delay',
      help: 'Delay of the echo in seconds: positive after the direct sound, negative for a pre-echo before it.',
      unit: 's',
      min: -60,
      max: 60,
      quantity: 'delay',
      measured: true,
    },
    {
      name: 'gain',
      flag: 'gain',
      type: 'number',
      label: 'Gain',
      help: 'Linear gain of the echo, −1 < G < 1 (negative: inverted polarity). Needs --delay.',
      min: -1,
      max: 1,
      measured: true,
    },
    {
      name: 'rangeSeconds',
      flag: 'range',
      type: 'range',
      label: 'Delay range',
      help: 'When measuring: delays to search for a reflection, MIN:MAX in seconds.',
      unit: 's',
      min: 0,
      max: 10,
      quantity: 'delay',
    },
    {
      name: 'channel',
      flag: 'channel',
      type: 'integer',
      label: 'Channel',
      help: 'Process only this channel (1 = first); the others pass through unchanged.',
      min: 1,
      max: 64,
    },
  ],
  // The algorithms load on first use (the editor page reads only this spec).
  load: algorithms,
  async prepare(source, params, ctx) {
    const { analyseEcho, singleEchoKernel, MAX_CANCEL_GAIN, renderCancellation } = await algorithms();
    const fs = source.sampleRateHz;
    const delay = params.delaySeconds;
    const gain = params.gain;
    const ch = params.channel;
    if (ch !== undefined && ch > source.channelCount) {
      throw new ParameterError(`--channel ${ch}: the file has ${source.channelCount} channel${source.channelCount === 1 ? '' : 's'}`);
    }
    const channel = ch === undefined ? -1 : ch - 1;
    if (gain !== undefined && !(Math.abs(gain) < 1)) {
      throw new ParameterError(`--gain ${gain}: an echo's gain must satisfy −1 < G < 1 (at |G| ≥ 1 the inverse is unstable)`);
    }
    if (gain !== undefined && delay === undefined) throw new ParameterError('--gain needs --delay');
    const duration = source.frames / fs;
    if (delay !== undefined) {
      if (Math.abs(delay) * fs < 1) throw new ParameterError(`--delay ${delay}: shorter than one sample (${(1000 / fs).toFixed(4)} ms)`);
      if (Math.abs(delay) >= duration) throw new ParameterError(`--delay ${delay}: outside the file, which is ${duration.toFixed(3)} s long`);
    }
    const echoes: EchoToCancel[] = [];
    const left: string[] = [];
    if (delay !== undefined) {
      const g = gain ?? (await measureAt(source, delay, channel, ctx));
      echoes.push({ kind: Math.abs(delay) >= 0.3 ? 'print-through' : 'reflection', delaySeconds: delay, gain: g, source: gain === undefined ? 'measured' : 'given' });
    } else {
      const a = await analyseEcho(source, {
        rangeSeconds: params.rangeSeconds,
        channel,
        signal: ctx.signal,
        progress: (f) => ctx.progress(0.5 * f),
        warn: (m) => ctx.warn(m),
      });
      const rf = a.reflection, pt = a.printThrough;
      if (rf.present === true && rf.delaySeconds !== null && rf.gain !== null) {
        echoes.push({ kind: 'reflection', delaySeconds: rf.delaySeconds, gain: rf.gain, source: 'measured', filter: rf.filter ?? undefined });
      } else if (rf.reason) {
        // A peak was seen and not cancelled: say so, and why (not determined, or set aside).
        left.push(`reflection ${rf.present === null ? 'not determined' : 'set aside'}: ${rf.reason}`);
      }
      if (pt.present === true && pt.delaySeconds !== null && pt.gain !== null) {
        echoes.push({ kind: 'print-through', delaySeconds: pt.delaySeconds, gain: pt.gain, source: 'measured' });
      } else if (pt.reason) {
        left.push(`print-through ${pt.present === null ? 'not determined' : 'set aside'}: ${pt.reason}`);
      }
      if (!echoes.length) {
        throw new NotFoundError(
          `no reflection or print-through found to cancel${left.length ? ` (${left.join('; ')})` : ''}; give --delay and --gain to cancel one by hand`,
        );
      }
    }
    // The echo that carries the most energy matters most and is named (and cancelled) first: a
    // reflection of gain g adds g² of the programme's energy, a copy at c dB adds 10^(c/10).
    echoes.sort((p, q) => Math.abs(q.gain) - Math.abs(p.gain));
    const plan: CancelPlan = { post: null, pre: null, postAfter: null, channels: channel < 0 ? null : [channel] };
    const used: EchoToCancel[] = [];
    for (const e of echoes) {
      const g = clampGain(e.gain, ctx, MAX_CANCEL_GAIN);
      const d = Math.abs(e.delaySeconds) * fs;
      const kernel = e.filter ? { offset: e.filter.firstTapSamples, taps: Float64Array.from(e.filter.taps) } : singleEchoKernel(d, g);
      if (e.delaySeconds > 0) {
        if (!plan.post) plan.post = kernel;
        else if (!plan.postAfter) plan.postAfter = kernel;
        else continue;
      } else if (!plan.pre) plan.pre = { kernel, gain: g, delaySamples: d };
      else continue;
      used.push({ ...e, gain: g });
    }
    const describe = (e: EchoToCancel) =>
      e.kind === 'reflection'
        ? `reflection ${(e.delaySeconds * 1000).toFixed(3)} ms, gain ${e.gain.toFixed(4)}${e.filter ? ` (${e.filter.taps.length}-tap filter)` : ''}`
        : `print-through ${Math.abs(e.delaySeconds).toFixed(4)} s ${e.delaySeconds < 0 ? 'before' : 'after'}, ${gainToDb(e.gain).toFixed(1)} dB`;
    const resolved: ParamValues = {};
    const [main, second] = used as [EchoToCancel, EchoToCancel | undefined];
    resolved.delaySeconds = main.delaySeconds;
    resolved.gain = main.gain;
    if (second) {
      resolved.secondDelaySeconds = second.delaySeconds;
      resolved.secondGain = second.gain;
    }
    // In the order they matter (the first is the strongest), and what was found but left alone.
    resolved.cancelled = used.map(describe).join('; ');
    if (left.length) resolved.left = left.join('; ');
    if (ch !== undefined) resolved.channel = ch;
    const filtered = used.find((e) => e.filter);
    if (filtered?.filter) resolved.filterTaps = filtered.filter.taps.length;
    return {
      sampleRateHz: fs,
      channelCount: source.channelCount,
      framesHint: source.frames,
      blocks: renderCancellation(source, plan),
      resolved,
    };
  },
  history(resolved) {
    const parts = [`reelwright unecho delay=${Number(resolved.delaySeconds).toFixed(7)}s gain=${Number(resolved.gain).toFixed(4)}`];
    if (resolved.secondDelaySeconds !== undefined) {
      parts.push(`then delay=${Number(resolved.secondDelaySeconds).toFixed(7)}s gain=${Number(resolved.secondGain).toFixed(5)}`);
    }
    if (resolved.channel !== undefined) parts.push(`channel=${resolved.channel}`);
    if (resolved.filterTaps !== undefined) parts.push(`filter=${resolved.filterTaps}taps`);
    return parts.join(' ');
  },
});
