/**
 * `flutter`: wow, flutter and drift of the playback machine from a test tone (3150 Hz by default,
 * IEC 60386 / AES6-2008; `--tone 3000` for older NAB/JIS practice). The tone segment is found
 * automatically (dsp/flutter/locate.ts), FM-demodulated (demodulate.ts) and measured with the
 * standard weighting and a two-sigma reading (weighting.ts, meter.ts).
 */
import { defineAnalysis, type FindingDraft } from './types.ts';
import type { FlutterFigures } from '../flutter/meter.ts';

const algorithms = async () => {
  const [{ locateTone }, { demodulateTone }, { flutterFigures }] = await Promise.all([import('../flutter/locate.ts'), import('../flutter/demodulate.ts'), import('../flutter/meter.ts')]);
  return { locateTone, demodulateTone, flutterFigures };
};
import { fixedOrDash, roundTo, sectionNumber } from './sections.ts';

export interface FlutterResult extends FlutterFigures {
  /** Nominal tone, Hz. */
  toneHz: number;
  segment: { startSeconds: number; endSeconds: number; levelDbfs: number; channel: number };
}

const pct = (v: number, digits = 3) => `${v.toFixed(digits)} %`;

/** What a dominant rate usually points at on a tape machine (trade knowledge, not a standard). */
export function likelyCause(rateHz: number): string {
  if (rateHz < 1) return 'slow changes like this usually come from the reels: tape tension, a sticking supply reel or a speed-regulation hunt';
  if (rateHz < 10) return 'a rate of a few hertz usually comes from once-per-turn eccentricity of the capstan or the pinch roller';
  if (rateHz < 40) return 'a rate of tens of hertz usually comes from the capstan motor, a worn bearing or a guide';
  return 'a fast rate like this is usually scrape flutter: the tape vibrating over the heads and guides';
}

export const flutter = defineAnalysis<FlutterResult>()({
  kind: 'analysis',
  name: 'flutter',
  key: 'flutter',
  title: 'Wow and flutter',
  summary: 'Wow, flutter and drift from a test tone (IEC 60386 / AES6 weighting, two-sigma reading) and the dominant rate.',
  params: [
    {
      name: 'toneHz', flag: 'tone', type: 'number', label: 'Test tone', unit: 'Hz',
      help: 'Nominal frequency of the test tone on the tape (3150 Hz per IEC/AES; 3000 Hz in older NAB and JIS practice).',
      min: 100, max: 20000, default: 3150,
    },
  ],
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, params, ctx) {
    const { locateTone, demodulateTone, flutterFigures } = await algorithms();
    const toneHz = params.toneHz ?? 3150;
    const locateCtx = { ...ctx, progress: (f: number) => ctx.progress(0.5 * f) };
    const seg = await locateTone(source, toneHz, {}, locateCtx);
    const demodCtx = { ...ctx, progress: (f: number) => ctx.progress(0.5 + 0.5 * f) };
    const track = await demodulateTone(source, seg.startFrame, seg.endFrame, seg.frequencyHz, demodCtx, seg.channel);
    const figures = flutterFigures(track, toneHz);
    if (figures.observationSeconds < 5) {
      ctx.warn(`the test tone lasts only ${figures.observationSeconds.toFixed(1)} s; AES6 asks for at least 5 s of observation`);
    }
    return {
      toneHz,
      ...figures,
      segment: {
        startSeconds: seg.startFrame / source.sampleRateHz,
        endSeconds: seg.endFrame / source.sampleRateHz,
        levelDbfs: Math.round(seg.levelDbfs * 10) / 10,
        channel: seg.channel + 1,
      },
    };
  },
  findings(r) {
    const out: FindingDraft[] = [];
    const rate = r.dominantRateHz;
    const severity = r.weightedPeakPercent > 0.25 ? 'fail' : r.weightedPeakPercent > 0.1 ? 'warn' : 'ok';
    out.push({
      title: `Wow and flutter ±${pct(r.weightedPeakPercent)} weighted`,
      sentence:
        `The ${r.toneHz} Hz test tone (${r.segment.startSeconds.toFixed(1)}–${r.segment.endSeconds.toFixed(1)} s) wavers by ±${pct(r.weightedPeakPercent)} weighted (two-sigma, IEC 60386), ` +
        `${pct(r.weightedRmsPercent)} weighted RMS, ±${pct(r.unweightedPeakPercent)} unweighted.` +
        (rate !== null ? ` The strongest speed variation repeats at ${rate.toFixed(2)} Hz: ${likelyCause(rate)}.` : ''),
      value: Math.round(r.weightedPeakPercent * 1000) / 1000,
      unit: '%',
      severity,
    });
    if (r.driftPercent > 0.05) {
      out.push({
        title: `Speed drifts ±${pct(r.driftPercent, 2)}`,
        sentence: `Over the tone the speed wanders slowly by up to ±${pct(r.driftPercent, 2)} (changes slower than about half a second).`,
        value: Math.round(r.driftPercent * 1000) / 1000,
        unit: '%',
        severity: r.driftPercent > 0.5 ? 'warn' : 'info',
      });
    }
    if (Math.abs(r.meanSpeedErrorPercent) > 0.2) {
      const dir = r.meanSpeedErrorPercent > 0 ? 'fast' : 'slow';
      out.push({
        title: `Tone reads ${r.measuredToneHz.toFixed(1)} Hz: ${Math.abs(r.meanSpeedErrorPercent).toFixed(2)} % ${dir}`,
        sentence: `The ${r.toneHz} Hz tone plays at ${r.measuredToneHz.toFixed(1)} Hz, so the transfer ran ${Math.abs(r.meanSpeedErrorPercent).toFixed(2)} % ${dir} (if the tone was recorded on pitch).`,
        value: Math.round(r.meanSpeedErrorPercent * 1000) / 1000,
        unit: '%',
        severity: Math.abs(r.meanSpeedErrorPercent) > 1 ? 'warn' : 'info',
      });
    }
    return out;
  },

  // The batch report's columns and the check's gates (only when a test tone was found).
  columns: [
    { header: 'flutterToneHz', get: (s) => sectionNumber(s, 'flutter', 'toneHz') },
    { header: 'flutterWeightedPeakPercent', get: (s) => roundTo(sectionNumber(s, 'flutter', 'weightedPeakPercent'), 4) },
    { header: 'flutterUnweightedPeakPercent', get: (s) => roundTo(sectionNumber(s, 'flutter', 'unweightedPeakPercent'), 4) },
    { header: 'flutterWeightedRmsPercent', get: (s) => roundTo(sectionNumber(s, 'flutter', 'weightedRmsPercent'), 4) },
    { header: 'flutterDriftPercent', get: (s) => roundTo(sectionNumber(s, 'flutter', 'driftPercent'), 4) },
    { header: 'flutterDominantRateHz', get: (s) => roundTo(sectionNumber(s, 'flutter', 'dominantRateHz'), 3) },
  ],
  overview: [{ heading: 'Flutter % (wtd)', text: (s) => fixedOrDash(sectionNumber(s, 'flutter', 'weightedPeakPercent'), 3) }],
  metrics: [
    {
      id: 'flutter.weightedPeakPercent', label: 'wow and flutter (weighted)', unit: '%', digits: 3, get: (s) => sectionNumber(s, 'flutter', 'weightedPeakPercent'),
      defaultRule: { warnAt: 0.1, failAt: 0.25, comment: 'Wow and flutter, IEC 60386 weighted, two-sigma peak (only when a test tone is found).' },
    },
    {
      id: 'flutter.driftPercent', label: 'speed drift', unit: '%', digits: 2, get: (s) => sectionNumber(s, 'flutter', 'driftPercent'),
      defaultRule: { warnAt: 0.2, failAt: 1, comment: 'Slow speed drift over the test tone, +/- %.' },
    },
    {
      id: 'flutter.meanSpeedErrorPercent', label: 'test tone off nominal', unit: '%', digits: 2,
      get: (s) => {
        const v = sectionNumber(s, 'flutter', 'meanSpeedErrorPercent');
        return v === undefined ? undefined : Math.abs(v);
      },
      defaultRule: { warnAt: 0.5, failAt: 2, comment: 'Test tone off its nominal frequency, absolute %.' },
    },
  ],
});
