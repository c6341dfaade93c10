/**
 * `reverse IN OUT [--channels LIST] [--from S --to S]`: play the whole file, a time range, or
 * chosen channels backwards (a quarter-track reel transferred in one pass has one channel
 * reversed). Samples are moved, not computed: reversing twice returns the input exactly.
 */
import { ParameterError } from '../errors.ts';
import { list, num } from './params.ts';
import { reversedSegments } from './timing.ts';
import { defineCorrection } from './types.ts';

const algorithms = () => import('../reverse/reverse.ts');

export const reverse = defineCorrection({
  kind: 'correction',
  name: 'reverse',
  title: 'Reverse',
  summary: 'Play the whole file, a time range, or chosen channels backwards (bit-exact).',
  measures: 'reversed',
  params: [
    { name: 'channels', flag: 'channels', type: 'list', label: 'Channels', help: 'Channels to reverse, counted from 1, comma-separated (default: all).', min: 1 },
    { name: 'fromSeconds', flag: 'from', type: 'number', label: 'From', help: 'Start of the range to reverse (default: the start).', unit: 's', min: 0, quantity: 'instant' },
    { name: 'toSeconds', flag: 'to', type: 'number', label: 'To', help: 'End of the range to reverse (default: the end).', unit: 's', min: 0, quantity: 'instant' },
  ],
  // The algorithms load on first use (the editor page reads only this spec).
  load: algorithms,
  async prepare(source, params, ctx) {
    const { resolveReverse, reverseBlocks } = await algorithms();
    const fs = source.sampleRateHz;
    const channelsGiven = params.channels;
    if (channelsGiven) {
      for (const c of channelsGiven) {
        if (!Number.isInteger(c)) throw new ParameterError(`--channels ${channelsGiven.join(',')}: channel numbers are whole numbers from 1`);
        if (c > source.channelCount) throw new ParameterError(`--channels ${channelsGiven.join(',')}: channel ${c} does not exist (the input has ${source.channelCount})`);
      }
    }
    const from = params.fromSeconds ?? 0;
    let to = params.toSeconds;
    const duration = source.frames / fs;
    if (to !== undefined && to > duration) {
      ctx.warn(`--to ${to} is past the end (${duration.toFixed(3)} s); reversing up to the end`);
      to = duration;
    }
    const startFrame = Math.round(from * fs);
    const endFrame = to === undefined ? source.frames : Math.round(to * fs);
    if (from >= duration) throw new ParameterError(`--from ${from}: the input is only ${duration.toFixed(3)} s long`);
    if (endFrame <= startFrame) throw new ParameterError(`--from ${from} --to ${to ?? duration}: the range is empty`);
    const opts = { channels: channelsGiven?.map((c) => c - 1), startFrame, endFrame };
    const resolved = resolveReverse(source, opts);
    return {
      sampleRateHz: fs,
      channelCount: source.channelCount,
      framesHint: source.frames,
      blocks: reverseBlocks(source, opts),
      resolved: {
        channels: resolved.channels.map((c) => c + 1),
        fromSeconds: resolved.startFrame / fs,
        toSeconds: resolved.endFrame / fs,
        startFrame: resolved.startFrame,
        endFrame: resolved.endFrame,
      },
    };
  },
  timing(r, facts) {
    // Reversed material moves (t → from + to − t) and its lags change sign; with only some
    // channels or part of the file reversed, a lag measured across the whole no longer holds.
    const d = facts.frames / facts.sampleRateHz;
    const from = num(r, 'fromSeconds') ?? 0, to = Math.min(d, num(r, 'toSeconds') ?? d);
    const chs = list(r, 'channels');
    const all = !chs || chs.length >= facts.channelCount;
    const whole = from <= 0 && to >= d;
    return {
      segments: all ? reversedSegments(d, from, to) : [{ inStart: 0, inEnd: d, outStart: 0, outEnd: d }],
      mapDelay: (x) => (all && whole ? -x : null),
    };
  },
  history(r) {
    const ch = (r.channels as number[]).join(',');
    return `reelwright reverse channels=${ch} frames=${String(r.startFrame)}-${String(r.endFrame)}`;
  },
});
