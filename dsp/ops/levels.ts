/**
 * `levels`: sample peak, true peak (4× oversampling, ITU-R BS.1770-4 Annex 2), RMS, DC offset,
 * clipped samples and runs, integrated loudness (BS.1770-4 K-weighting and gating) with momentary
 * and short-term maxima and the loudness range (EBU Tech 3342), dropouts (runs of digital zeros
 * inside programme), level dips (listed for listening), silence at head and tail, and the effective bandwidth (in the numbers only: the `spectrum` analysis words the
 * bandwidth finding). Methods: dsp/levels/.
 */
import { defineAnalysis, type FindingDraft } from './types.ts';
import { clipThreshold } from './info.ts';
import type { LevelsResult } from '../levels/analyze.ts';

const algorithms = () => import('../levels/analyze.ts');
import { arrayOf, fixedOrDash, numberOf, objectOf, roundTo, sectionNumber, type Sections } from './sections.ts';

function clippedRuns(s: Sections): number | undefined {
  const ch = arrayOf(objectOf(s.levels)?.channels);
  return ch ? ch.reduce<number>((a, c) => a + (numberOf(objectOf(c)?.clippedRunCount) ?? 0), 0) : undefined;
}

function dcOffsetPercent(s: Sections): number | undefined {
  const ch = arrayOf(objectOf(s.levels)?.channels);
  return ch ? Math.max(0, ...ch.map((c) => Math.abs(numberOf(objectOf(c)?.dcOffset) ?? 0) * 100)) : undefined;
}

const dropouts = (s: Sections): number | undefined => arrayOf(objectOf(s.levels)?.dropouts)?.length;

function silence(s: Sections, key: 'headSeconds' | 'tailSeconds'): number | undefined {
  const si = objectOf(objectOf(s.levels)?.silence);
  if (!si || si.allSilent === true) return undefined;
  return numberOf(si[key]);
}

/**
 * The levels analysis's figure (its rule finds band edges and reads full-band pink-ish programme
 * as full band), else the spectrum analysis's.
 */
const bandwidthHz = (s: Sections): number | undefined =>
  objectOf(objectOf(s.levels)?.silence)?.allSilent === true ? undefined : sectionNumber(s, 'levels', 'bandwidthHz') ?? sectionNumber(s, 'spectrum', 'bandwidthHz');

export type { LevelsResult } from '../levels/analyze.ts';

const f1 = (v: number) => (Number.isFinite(v) ? v.toFixed(1) : '−∞');
const ms = (seconds: number) => `${(seconds * 1000).toFixed(0)} ms`;

export const levels = defineAnalysis<LevelsResult>()({
  kind: 'analysis',
  name: 'levels',
  key: 'levels',
  title: 'Levels',
  summary: 'Peak and true peak, loudness (BS.1770), RMS, DC offset, clipping, dropouts, head/tail silence and bandwidth.',
  params: [
    {
      name: 'silenceThresholdDbfs', flag: 'silence-db', type: 'number', label: 'Silence below', unit: 'dB',
      help: 'Head and tail count as silent while every channel stays below this level (dBFS, 10 ms windows).',
      min: -140, max: 0, default: -60,
    },
    {
      name: 'dropoutDepthDb', flag: 'dropout-db', type: 'number', label: 'Level dip depth', unit: 'dB',
      help: 'A level dip is a sudden drop at least this deep, lasting 5–500 ms, in otherwise steady programme (listed for listening; runs of digital zeros are dropouts whatever their depth).',
      min: 6, max: 80, default: 20,
    },
    {
      name: 'clipRunSamples', flag: 'clip-run', type: 'integer', label: 'Clipped run', unit: 'samples',
      help: 'Consecutive samples at full scale that count as one clipped run.',
      min: 1, max: 1000, default: 3,
    },
  ],
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, params, ctx) {
    const { analyzeLevels } = await algorithms();
    const meta = source as { bitsPerSample?: number; sampleFormat?: 'int' | 'float' };
    return analyzeLevels(
      source,
      {
        clipLevel: clipThreshold(meta.bitsPerSample, meta.sampleFormat),
        clipRunSamples: params.clipRunSamples,
        silenceThresholdDbfs: params.silenceThresholdDbfs,
        dropoutDepthDb: params.dropoutDepthDb,
      },
      ctx,
    );
  },
  findings(r) {
    const out: FindingDraft[] = [];
    out.push({
      title: `Loudness ${f1(r.loudnessLufs)} LUFS, true peak ${f1(r.truePeakDbtp)} dBTP`,
      sentence: `The whole file measures ${f1(r.loudnessLufs)} LUFS integrated loudness (ITU-R BS.1770) with a highest true peak of ${f1(r.truePeakDbtp)} dBTP and a loudness range of ${r.loudnessRangeLu.toFixed(1)} LU.`,
      value: Number.isFinite(r.loudnessLufs) ? Math.round(r.loudnessLufs * 10) / 10 : 'silent',
      unit: 'LUFS',
      // Above 0 dBTP the reconstructed signal overshoots full scale: a converter or a lossy encoder clips it.
      severity: r.truePeakDbtp > 0 ? 'warn' : 'info',
    });
    for (const ch of r.channels) {
      if (!(ch.peakDbfs > -60)) {
        out.push({
          title: `Channel ${ch.channel} is silent`, severity: 'warn', value: Number.isFinite(ch.peakDbfs) ? Math.round(ch.peakDbfs) : 'no signal', unit: 'dBFS',
          sentence: `Channel ${ch.channel} never rises above ${f1(ch.peakDbfs)} dBFS: check the cable, the head and the track selection.`,
        });
      }
      if (ch.clippedRunCount > 0) {
        out.push({
          title: `Channel ${ch.channel} clipped ${ch.clippedRunCount} times`, severity: 'warn', value: ch.clippedRunCount, unit: 'runs',
          sentence: `Channel ${ch.channel} sits at full scale for runs of several samples ${ch.clippedRunCount} times (${ch.clippedSamples} samples in all): the transfer level was too high; redo it with less gain.`,
        });
      }
    }
    if (r.dropouts.length > 0) {
      const d = r.dropouts[0]!;
      const n = r.dropouts.length;
      out.push({
        title: `${n} dropout${n > 1 ? 's' : ''} (digital silence)`, severity: 'warn', value: n, unit: 'dropouts',
        sentence: `The audio is exact digital silence for ${ms(d.durationSeconds)} at ${d.startSeconds.toFixed(3)} s${n > 1 ? ` and ${n - 1} more time${n > 2 ? 's' : ''}` : ''} while the programme runs on either side: a transfer fault (a lost buffer, a damaged file or a bad edit), not the recording. Transfer that part again.`,
      });
    }
    if (r.levelDips.length > 0) {
      const d = r.levelDips[0]!;
      const n = r.levelDips.length;
      out.push({
        title: `${n} brief level dip${n > 1 ? 's' : ''}`, severity: 'info', value: n, unit: 'dips',
        sentence: `The level falls suddenly by ${d.depthDb.toFixed(0)} dB for ${ms(d.durationSeconds)} at ${d.startSeconds.toFixed(2)} s${n > 1 ? ` and ${n - 1} more time${n > 2 ? 's' : ''}` : ''} inside steady programme. That may be a tape dropout (the tape leaving the head) or simply a gap in the playing — a pause between notes or a stop consonant; the level alone cannot tell, so listen there.`,
      });
    }
    if (r.silence.allSilent) {
      out.push({ title: 'No signal', severity: 'fail', sentence: `The whole file stays below ${r.silence.thresholdDbfs} dBFS.` });
    } else if (r.silence.headSeconds + r.silence.tailSeconds > 0) {
      out.push({
        title: `Silence: ${r.silence.headSeconds.toFixed(1)} s at the head, ${r.silence.tailSeconds.toFixed(1)} s at the tail`, severity: 'info', value: r.silence.headSeconds, unit: 's',
        sentence: `The file starts with ${r.silence.headSeconds.toFixed(1)} s and ends with ${r.silence.tailSeconds.toFixed(1)} s below ${r.silence.thresholdDbfs} dBFS.`,
      });
    }
    return out;
  },

  // The batch report's columns and the check's gates (dsp/ops/sections.ts reads the JSON sections).
  columns: [
    { header: 'loudnessLufs', get: (s) => roundTo(sectionNumber(s, 'levels', 'loudnessLufs'), 2) },
    { header: 'truePeakDbtp', get: (s) => roundTo(sectionNumber(s, 'levels', 'truePeakDbtp'), 2) },
    { header: 'loudnessRangeLu', get: (s) => roundTo(sectionNumber(s, 'levels', 'loudnessRangeLu'), 1) },
    { header: 'clippedRuns', get: clippedRuns },
    { header: 'dcOffsetPercent', get: (s) => roundTo(dcOffsetPercent(s), 3) },
    { header: 'dropouts', get: dropouts },
    { header: 'headSilenceSeconds', get: (s) => silence(s, 'headSeconds') },
    { header: 'tailSilenceSeconds', get: (s) => silence(s, 'tailSeconds') },
    { header: 'bandwidthHz', get: bandwidthHz },
  ],
  overview: [
    { heading: 'Loudness LUFS', text: (s) => fixedOrDash(sectionNumber(s, 'levels', 'loudnessLufs'), 1) },
    { heading: 'True peak dBTP', text: (s) => fixedOrDash(sectionNumber(s, 'levels', 'truePeakDbtp'), 1) },
  ],
  metrics: [
    {
      id: 'levels.clippedRuns', label: 'clipped runs', unit: '', digits: 0, get: clippedRuns,
      defaultRule: { warnAt: 1, failAt: 10, comment: 'Runs of 3 or more consecutive samples at full scale, all channels.' },
    },
    {
      id: 'levels.truePeakDbtp', label: 'true peak', unit: 'dBTP', digits: 1, get: (s) => sectionNumber(s, 'levels', 'truePeakDbtp'),
      defaultRule: { warnAt: -0.5, failAt: 0.5, comment: 'Highest true peak (BS.1770, 4x oversampled).' },
    },
    {
      id: 'levels.loudnessLufs', label: 'loudness', unit: 'LUFS', digits: 1, get: (s) => sectionNumber(s, 'levels', 'loudnessLufs'),
      defaultRule: { warnBelow: -40, comment: "Integrated loudness; very quiet transfers waste the converter's range." },
    },
    {
      id: 'levels.silentChannels', label: 'silent channels', unit: '', digits: 0,
      get: (s) => {
        const ch = arrayOf(objectOf(s.levels)?.channels);
        // A null/−∞ peak (digital silence) counts as silent.
        return ch ? ch.filter((c) => !((numberOf(objectOf(c)?.peakDbfs) ?? -Infinity) > -60)).length : undefined;
      },
      defaultRule: { failAt: 1, comment: 'Channels that never rise above -60 dBFS (dead channel or no signal).' },
    },
    {
      id: 'levels.dcOffsetPercent', label: 'DC offset', unit: '%', digits: 2, get: dcOffsetPercent,
      defaultRule: { warnAt: 0.5, failAt: 2, comment: 'Largest DC offset of any channel, % of full scale.' },
    },
    {
      id: 'levels.dropouts', label: 'dropouts', unit: '', digits: 0, get: dropouts,
      defaultRule: { warnAt: 1, failAt: 5, comment: 'Runs of exact digital zeros (2-500 ms) inside running programme: a transfer fault.' },
    },
    {
      id: 'levels.headSilenceSeconds', label: 'silence at the head', unit: 's', digits: 1, get: (s) => silence(s, 'headSeconds'),
      defaultRule: { warnAt: 30, comment: 'Silence (below -60 dBFS) before the programme starts.' },
    },
    {
      id: 'levels.tailSilenceSeconds', label: 'silence at the tail', unit: 's', digits: 1, get: (s) => silence(s, 'tailSeconds'),
      defaultRule: { warnAt: 60, comment: 'Silence after the programme ends.' },
    },
    {
      id: 'levels.bandwidthHz', label: 'effective bandwidth', unit: 'Hz', digits: 0, get: bandwidthHz,
      defaultRule: { warnBelow: 3000, comment: 'Effective bandwidth (from the levels analysis, else from spectrum); below this the transfer sounds muffled or the wrong head or equalisation was used.' },
    },
  ],
});
