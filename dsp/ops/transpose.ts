/**
 * `transpose IN OUT --semitones S | --cents C [--keep-formants]`: change the pitch, keep the
 * duration — a time-stretch by the frequency factor followed by varispeed resampling
 * (dsp/stretch/render.ts). `--keep-formants` keeps the spectral envelope (true-envelope cepstral
 * estimate, dsp/stretch/envelope.ts) so a voice keeps the size of its speaker.
 */
import { ParameterError } from '../errors.ts';
import { num } from './params.ts';
import { defineCorrection } from './types.ts';

const QUALITY = 'draft' as const;
const algorithms = () => import('../stretch/render.ts');

export const transpose = defineCorrection({
  kind: 'correction',
  name: 'transpose',
  title: 'Transpose',
  summary: 'Raise or lower the pitch without changing the duration, optionally keeping the formants of a voice.',
  params: [
    { name: 'semitones', flag: 'semitones', type: 'number', label: 'Semitones', help: 'Raise (or, negative, lower) by this many equal-tempered semitones.', unit: 'semitones', min: -24, max: 24 },
    { name: 'cents', flag: 'cents', type: 'number', label: 'Cents', help: 'Raise or lower by this many cents (added to --semitones).', unit: 'cents', min: -2400, max: 2400 },
    { name: 'keepFormants', flag: 'keep-formants', type: 'boolean', label: 'Keep formants', help: 'Keep the spectral envelope, so a transposed voice still sounds like the same speaker.', default: false },
  ],
  // The algorithms load on first use (the editor page reads only this spec).
  load: algorithms,
  async prepare(source, params, ctx) {
    const { planTranspose, transposeSource } = await algorithms();
    const semitones = params.semitones, cents = params.cents;
    if (semitones === undefined && cents === undefined) throw new ParameterError('say how far: --semitones S or --cents C');
    const total = 100 * (semitones ?? 0) + (cents ?? 0);
    const keepFormants = params.keepFormants === true;
    const plan = planTranspose(total, QUALITY); // throws ParameterError beyond ±2400 cents
    if (total === 0) {
      ctx.warn('a transposition of 0 cents changes nothing; the output is an exact copy');
      return {
        sampleRateHz: source.sampleRateHz,
        channelCount: source.channelCount,
        framesHint: source.frames,
        blocks: source.blocks(),
        resolved: { cents: 0, factor: 1, stretchRatio: 1, fractionErrorCents: 0, keepFormants, quality: 'copy' },
      };
    }
    return {
      sampleRateHz: source.sampleRateHz,
      channelCount: source.channelCount,
      framesHint: source.frames,
      blocks: transposeSource(source, { cents: total, keepFormants, quality: QUALITY }),
      resolved: {
        cents: total,
        factor: plan.factor,
        stretchRatio: plan.stretchRatio,
        fractionErrorCents: plan.errorCents,
        keepFormants,
        quality: QUALITY,
      },
    };
  },
  timing(r, facts) {
    // Duration kept; lags within the sound pass through a phase vocoder and a resampler, so a lag
    // measured before is measured again after (no transposition at all keeps them).
    const d = facts.frames / facts.sampleRateHz;
    const none = (num(r, 'cents') ?? 0) === 0 && (num(r, 'semitones') ?? 0) === 0;
    return { segments: [{ inStart: 0, inEnd: d, outStart: 0, outEnd: d }], mapDelay: (x) => (none ? x : null) };
  },
  history(r) {
    return `reelwright transpose cents=${Number(r.cents).toPrecision(8)} factor=${Number(r.factor).toPrecision(8)}${r.keepFormants ? ' keep-formants' : ''} phase vocoder + resampler quality=${String(r.quality)}`;
  },
});
