/**
 * `align IN OUT`: removes the delay between channels 1 and 2 (an azimuth error) by advancing
 * channel 2 by the measured — or given — delay with a Kaiser-windowed-sinc fractional-delay filter
 * (dsp/core/fractional-delay.ts; 64 taps, β for 100 dB). Channel 1 and any further channels pass
 * unchanged, so the file keeps its timing; the output has exactly as many frames as the input.
 */
import { defineCorrection } from './types.ts';
import type { Block } from '../source.ts';
import { ParameterError } from '../errors.ts';

const algorithms = async () => {
  const [{ FractionalDelay }, { crossSpectrum, estimateDelay }] = await Promise.all([import('../core/fractional-delay.ts'), import('../azimuth/delay.ts')]);
  return { FractionalDelay, crossSpectrum, estimateDelay };
};

export const align = defineCorrection({
  kind: 'correction',
  name: 'align',
  title: 'Align channels',
  summary: 'Remove the delay between the two channels (azimuth error), measured or given with --delay.',
  params: [
    {
      name: 'delaySeconds', flag: 'delay', type: 'number', label: 'Delay', unit: 's',
      help: 'Delay of channel 2 behind channel 1 to remove, in seconds (negative when channel 1 lags). Measured when absent.',
      min: -0.05, max: 0.05, quantity: 'delay', measured: true,
    },
  ],
  measures: 'azimuth',
  applies: (facts) => facts.channelCount >= 2,
  // The algorithms load on first use (the editor page reads only this spec).
  load: algorithms,
  async prepare(source, params, ctx) {
    const { FractionalDelay, crossSpectrum, estimateDelay } = await algorithms();
    if (source.channelCount < 2) throw new ParameterError('align needs at least two channels');
    let delaySeconds = params.delaySeconds;
    if (delaySeconds === undefined) delaySeconds = estimateDelay(await crossSpectrum(source, ctx)).delaySeconds;
    const delaySamples = delaySeconds * source.sampleRateHz;
    const nCh = source.channelCount;
    async function* blocks(): AsyncIterable<Block> {
      // Channel 2 is advanced by the delay; the pending queue keeps every channel the same length.
      const filter = new FractionalDelay({ delaySamples: -delaySamples });
      let pending = new Float64Array(0);
      const queue: Block[] = [];
      const emit = function* (final: boolean): Generator<Block> {
        while (queue.length && (pending.length >= queue[0]![0]!.length || final)) {
          const b = queue.shift()!;
          const len = b[0]!.length;
          b[1] = pending.slice(0, len);
          pending = pending.slice(len);
          yield b;
        }
      };
      for await (const block of source.blocks()) {
        const y = filter.process(block[1]!);
        const merged = new Float64Array(pending.length + y.length);
        merged.set(pending);
        merged.set(y, pending.length);
        pending = merged;
        queue.push(block.map((c) => c) as Block);
        yield* emit(false);
      }
      const tail = filter.flush();
      const merged = new Float64Array(pending.length + tail.length);
      merged.set(pending);
      merged.set(tail, pending.length);
      pending = merged;
      yield* emit(true);
    }
    return {
      sampleRateHz: source.sampleRateHz,
      channelCount: nCh,
      framesHint: source.frames,
      blocks: blocks(),
      resolved: { delaySeconds },
    };
  },
  history(resolved) {
    return `reelwright align delay=${Number(resolved.delaySeconds).toPrecision(6)}s (channel 2 advanced)`;
  },
});
