/**
 * `stretch IN OUT --ratio R`: change the duration by R (0.25–4) without changing the pitch —
 * phase vocoder with identity phase locking, onsets kept sharp, channels locked together
 * (dsp/stretch/phase-vocoder.ts).
 */
import { ParameterError } from '../errors.ts';
import { MAX_RATIO, MIN_RATIO } from '../stretch/limits.ts';
import { num } from './params.ts';
import { scaledSegments } from './timing.ts';
import { defineCorrection } from './types.ts';

const algorithms = async () => {
  const [{ defaultStretchFftSize }, { stretchSource }] = await Promise.all([import('../stretch/phase-vocoder.ts'), import('../stretch/render.ts')]);
  return { defaultStretchFftSize, stretchSource };
};

export const stretch = defineCorrection({
  kind: 'correction',
  name: 'stretch',
  title: 'Time-stretch',
  summary: 'Make a recording longer or shorter (duration × ratio) without changing its pitch.',
  params: [
    {
      name: 'ratio',
      flag: 'ratio',
      type: 'number',
      label: 'Duration ratio',
      help: 'New duration ÷ old duration, 0.25 to 4 (1.25: a quarter longer; 0.8: a fifth shorter). Pitch is kept.',
      unit: '×',
      min: MIN_RATIO,
      max: MAX_RATIO,
    },
  ],
  // The algorithms load on first use (the editor page reads only this spec).
  load: algorithms,
  async prepare(source, params) {
    const { defaultStretchFftSize, stretchSource } = await algorithms();
    const ratio = params.ratio;
    if (ratio === undefined) throw new ParameterError('say how much: --ratio R (new duration ÷ old, 0.25 to 4)');
    if (!(ratio >= MIN_RATIO && ratio <= MAX_RATIO)) throw new ParameterError(`--ratio ${ratio}: outside ${MIN_RATIO} … ${MAX_RATIO}`);
    return {
      sampleRateHz: source.sampleRateHz,
      channelCount: source.channelCount,
      framesHint: Math.round(ratio * source.frames),
      blocks: stretchSource(source, { ratio }),
      resolved: { ratio, fftSize: defaultStretchFftSize(source.sampleRateHz) },
    };
  },
  timing(r, facts) {
    // Instants scale by the ratio; a lag within the sound is not simply scaled by a phase vocoder
    // (short ones stay in the spectrum, long ones move with the material), so it is measured again.
    const ratio = num(r, 'ratio');
    if (ratio === undefined) throw new ParameterError('say how much: --ratio R');
    return { segments: scaledSegments(facts.frames / facts.sampleRateHz, ratio), mapDelay: () => null };
  },
  history(r) {
    return `reelwright stretch ratio=${Number(r.ratio).toPrecision(8)} phase vocoder, identity phase locking, fft=${String(r.fftSize)}`;
  },
});
