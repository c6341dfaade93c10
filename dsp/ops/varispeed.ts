/**
 * `varispeed IN OUT`: play a recording faster or slower, as a tape machine's varispeed does — every
 * frequency ×factor, the duration ÷factor (x(a·t) ↔ X(f/a)/|a|) — through the band-limited
 * resampler in dsp/core/resample.ts (Kaiser-windowed sinc; 'archive' ≥ 140 dB image/alias
 * rejection, 'draft' ≥ 90 dB). The speed can be given (--factor, --undo, --semitones, --cents) or
 * measured and undone in one go (--from-hum, --from-tone, --follow-curve); --rate changes the
 * output sample rate at the same time. When every output frame falls on an input frame (a factor
 * of 1 at the same rate, or a factor equal to the rate change) the output is the input's samples.
 */
import { NotFoundError, ParameterError } from '../errors.ts';
import type { Resampler } from '../core/resample.ts';
import type { ResampleQuality } from '../core/resample-kernel.ts';
import type { SpeedMethod } from '../speed/estimate.ts';
import { num } from './params.ts';
import { scaledSegments } from './timing.ts';
import { defineCorrection, type ParamValues } from './types.ts';

const algorithms = async () => {
  const [{ resampleSource }, { ratioFromSpeedCurve, ratioForFactor }, { estimateSpeed }] = await Promise.all([
    import('../core/resample.ts'),
    import('../core/speed-curve.ts'),
    import('../speed/estimate.ts'),
  ]);
  return { ratioFromSpeedCurve, resampleSource, ratioForFactor, estimateSpeed };
};

export const MIN_FACTOR = 0.25;
export const MAX_FACTOR = 4;

/** The constant factor asked for by --factor, --undo, --semitones, --cents (product), or null. */
export function explicitFactor(p: ParamValues): number | null {
  const factor = num(p, 'factor'), undo = num(p, 'undo'), semis = num(p, 'semitones'), cents = num(p, 'cents');
  if (factor === undefined && undo === undefined && semis === undefined && cents === undefined) return null;
  let f = factor ?? 1;
  if (undo !== undefined) f /= undo;
  if (semis !== undefined) f *= Math.pow(2, semis / 12);
  if (cents !== undefined) f *= Math.pow(2, cents / 1200);
  return f;
}

export const varispeed = defineCorrection({
  kind: 'correction',
  name: 'varispeed',
  title: 'Varispeed',
  summary: 'Play a recording faster or slower (pitch and duration together), or measure its speed error and undo it.',
  params: [
    { name: 'factor', flag: 'factor', type: 'number', label: 'Factor', help: 'Play the input this many times as fast (2: an octave up, half as long; 0.5: an octave down).', unit: '×', min: MIN_FACTOR, max: MAX_FACTOR },
    { name: 'undo', flag: 'undo', type: 'number', label: 'Undo factor', help: 'Undo a measured speed factor S (the same as --factor 1/S).', unit: '×', min: MIN_FACTOR, max: MAX_FACTOR },
    { name: 'semitones', flag: 'semitones', type: 'number', label: 'Semitones', help: 'Raise (or, negative, lower) by this many equal-tempered semitones: factor 2^(S/12).', unit: 'semitones', min: -24, max: 24 },
    { name: 'cents', flag: 'cents', type: 'number', label: 'Cents', help: 'Raise or lower by this many cents: factor 2^(C/1200).', unit: 'cents', min: -2400, max: 2400 },
    { name: 'fromHum', flag: 'from-hum', type: 'enum', choices: ['50', '60'], label: 'Undo speed from hum', help: 'Measure the speed from mains hum of this frequency and undo it.', unit: 'Hz' },
    { name: 'fromTone', flag: 'from-tone', type: 'number', label: 'Undo speed from tone', help: 'Measure the speed from a reference tone recorded at this frequency and undo it.', unit: 'Hz', min: 20, max: 100000 },
    { name: 'followCurve', flag: 'follow-curve', type: 'boolean', label: 'Follow drift', help: 'Undo the measured speed moment by moment (drift through the file), not just its average.' },
    { name: 'quality', flag: 'quality', type: 'enum', choices: ['archive', 'draft'], default: 'archive', label: 'Quality', help: 'archive: ≥ 140 dB alias/image rejection, ±0.001 dB to 0.45 × the lower rate; draft: ≥ 90 dB, faster.' },
    { name: 'rateHz', flag: 'rate', type: 'number', label: 'Output sample rate', help: 'Sample rate of the output file (default: as the input).', unit: 'Hz', min: 4000, max: 768000 },
  ],
  measures: 'speed',
  // The algorithms load on first use (the editor page reads only this spec).
  load: algorithms,
  async prepare(source, params, ctx) {
    const { ratioFromSpeedCurve, resampleSource, ratioForFactor, estimateSpeed } = await algorithms();
    const quality: ResampleQuality = params.quality ?? 'archive';
    const inRate = source.sampleRateHz;
    const outRate = params.rateHz ?? inRate;
    const explicit = explicitFactor(params);
    const fromHum = params.fromHum;
    const fromTone = params.fromTone;
    const follow = params.followCurve === true;
    const measured = fromHum !== undefined || fromTone !== undefined || follow;
    if (explicit !== null && measured) {
      throw new ParameterError('--factor/--undo/--semitones/--cents set the speed; --from-hum/--from-tone/--follow-curve measure it: use one or the other');
    }
    if (explicit === null && !measured) {
      throw new ParameterError('say how to change the speed: --factor, --undo, --semitones, --cents, --from-hum, --from-tone or --follow-curve');
    }
    if (fromHum !== undefined && fromTone !== undefined) throw new ParameterError('--from-hum and --from-tone: choose one');
    const blocksOf = (ratio: ConstructorParameters<typeof Resampler>[0]['ratio']) => resampleSource(source, { ratio, quality });

    if (explicit !== null) {
      if (!(explicit >= MIN_FACTOR * (1 - 1e-12) && explicit <= MAX_FACTOR * (1 + 1e-12))) {
        throw new ParameterError(`the combined factor ${explicit.toPrecision(6)} is outside ${MIN_FACTOR}–${MAX_FACTOR}`);
      }
      const ratio = ratioForFactor(explicit, inRate, outRate);
      if (ratio === 1) {
        // One output frame per input frame at the same instants: the samples are the input's.
        // A resampler would still low-pass them (its band edge is 0.45 × the rate), so copy.
        ctx.warn(outRate === inRate
          ? 'a factor of 1 at the same sample rate changes nothing; the output is an exact copy'
          : `factor ${explicit} with the rate ${inRate} → ${outRate} Hz keeps every sample; the output is the same samples at ${outRate} Hz`);
        return {
          sampleRateHz: outRate,
          channelCount: source.channelCount,
          framesHint: source.frames,
          blocks: source.blocks(),
          resolved: { factor: explicit, quality: 'copy', rateHz: outRate },
        };
      }
      const framesHint = Math.ceil(source.frames * ratio - 1e-9);
      return {
        sampleRateHz: outRate,
        channelCount: source.channelCount,
        framesHint,
        blocks: blocksOf(ratio),
        resolved: { factor: explicit, quality, rateHz: outRate },
      };
    }

    // Measure, then undo.
    const methods: SpeedMethod[] = fromHum ? ['hum'] : fromTone ? ['tone'] : ['hum', 'tone', 'tuning'];
    const est = await estimateSpeed(
      source,
      { mainsHz: fromHum === '50' ? 50 : fromHum === '60' ? 60 : undefined, toneHz: fromTone, methods },
      { ...ctx, progress: (f) => ctx.progress(0.5 * f) },
    );
    if (est.method === null) {
      const what = fromHum ? `${fromHum} Hz mains hum` : fromTone ? `a steady ${fromTone} Hz reference tone` : 'hum, a reference tone or musical tuning';
      throw new NotFoundError(`could not measure the speed: no ${what} found with enough confidence (best ${est.confidence.toFixed(2)}); nothing written`);
    }
    const measuredFactor = est.factor;
    if (!(measuredFactor >= MIN_FACTOR && measuredFactor <= MAX_FACTOR)) {
      throw new ParameterError(`measured factor ${measuredFactor.toPrecision(6)} is outside ${MIN_FACTOR}–${MAX_FACTOR}`);
    }
    const resolvedBase = {
      measuredFactor,
      method: est.method,
      confidence: est.confidence,
      uncertaintyPercent: est.uncertaintyPercent ?? undefined,
      mainsHz: est.mainsHz ?? undefined,
      toneHz: est.toneHz ?? undefined,
      quality,
      rateHz: outRate,
    };
    if (follow) {
      const c = est.curve;
      if (c.timesSeconds.length < 2) {
        throw new NotFoundError(`no speed curve could be measured (${est.method} gave a single value ${measuredFactor.toFixed(5)}); use --undo ${measuredFactor.toFixed(5)} for a constant correction`);
      }
      const ratio = ratioFromSpeedCurve(c, { inputRateHz: inRate, outputRateHz: outRate, mode: 'undo' });
      return {
        sampleRateHz: outRate,
        channelCount: source.channelCount,
        framesHint: Math.round(source.frames * (outRate / inRate) * measuredFactor),
        blocks: blocksOf(ratio),
        resolved: {
          ...resolvedBase,
          followCurve: true,
          factor: 1 / measuredFactor,
          curveMinFactor: Math.min(...c.factors),
          curveMaxFactor: Math.max(...c.factors),
        },
      };
    }
    const factor = 1 / measuredFactor;
    const ratio = ratioForFactor(factor, inRate, outRate);
    return {
      sampleRateHz: outRate,
      channelCount: source.channelCount,
      framesHint: Math.ceil(source.frames * ratio - 1e-9),
      blocks: blocksOf(ratio),
      resolved: { ...resolvedBase, factor },
    };
  },
  timing(r, facts) {
    // Playing f times as fast divides every instant and every lag by f (a speed curve is taken
    // at its mean). Before rendering, a speed still to be measured is not known.
    const f = explicitFactor(r);
    if (f === null) throw new ParameterError('the speed change is known once it has been measured');
    return { segments: scaledSegments(facts.frames / facts.sampleRateHz, 1 / f), mapDelay: (d) => d / f };
  },
  history(r) {
    const parts = [`reelwright varispeed factor=${Number(r.factor).toPrecision(8)}`];
    if (r.measuredFactor !== undefined) parts.push(`measured=${Number(r.measuredFactor).toPrecision(8)} by ${String(r.method)}`);
    if (r.followCurve) parts.push('follow-curve');
    parts.push(`quality=${String(r.quality)}`, `rate=${String(r.rateHz)}`);
    return parts.join(' ');
  },
});
