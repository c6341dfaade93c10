/**
 * `speed`: how fast was this recording played, relative to how fast it was recorded?
 * factor = played speed ÷ recorded speed (ARCHITECTURE.md): 2 means everything is an octave high
 * and half as long (a 3¾ ips reel played at 7½). Evidence, in order of precision: mains hum
 * (50/60 Hz and harmonics), a reference tone at the head or tail, the tuning of the music.
 * The work is in dsp/speed/ (estimate.ts describes the choice, hum.ts / tone.ts / tuning.ts the
 * estimators).
 */
import { NotFoundError } from '../errors.ts';
import { defineAnalysis, type FindingDraft } from './types.ts';
import type { SpeedOptions, SpeedResult } from '../speed/estimate.ts';

const algorithms = () => import('../speed/estimate.ts');
import { numberOf, objectOf, roundTo, sectionNumber } from './sections.ts';

export type { SpeedResult } from '../speed/estimate.ts';

const pct = (factor: number) => Math.abs((factor - 1) * 100);

function speedOptions(params: { readonly mainsHz?: '50' | '60'; readonly toneHz?: number }): SpeedOptions {
  return { mainsHz: params.mainsHz === '50' ? 50 : params.mainsHz === '60' ? 60 : undefined, toneHz: params.toneHz };
}

const METHOD_WORDS = { hum: 'mains hum', tone: 'the reference tone', tuning: 'the tuning of the music' } as const;

export const speed = defineAnalysis<SpeedResult>()({
  kind: 'analysis',
  name: 'speed',
  key: 'speed',
  title: 'Speed',
  summary: 'Measure the speed a recording was played at (from mains hum, a reference tone or musical tuning) and its drift.',
  params: [
    {
      name: 'mainsHz',
      flag: 'mains',
      type: 'enum',
      choices: ['50', '60'],
      label: 'Mains frequency',
      help: 'Mains frequency where the recording was made; without it both 50 and 60 Hz are tried.',
      unit: 'Hz',
    },
    {
      name: 'toneHz',
      flag: 'tone',
      type: 'number',
      label: 'Reference tone',
      help: 'Frequency of the line-up tone as it was recorded (e.g. 1000, 3150, 10000); without it a standard tone is looked for at the head or tail.',
      unit: 'Hz',
      min: 20,
      max: 100000,
    },
  ],
  applies: (facts) => facts.frames >= facts.sampleRateHz,
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, params, ctx) {
    const { estimateSpeed } = await algorithms();
    const opts = speedOptions(params);
    const result = await estimateSpeed(source, opts, ctx);
    if (opts.mainsHz && !result.candidates.some((c) => c.method === 'hum' && c.mainsHz === opts.mainsHz && c.confidence >= 0.5)) {
      throw new NotFoundError(
        `no ${opts.mainsHz} Hz mains hum found (looked for a steady line and its harmonics at ${opts.mainsHz * 0.25}–${opts.mainsHz * 4} Hz, speed factor 0.25–4)`,
      );
    }
    if (opts.toneHz && !result.candidates.some((c) => c.method === 'tone' && c.toneHz === opts.toneHz && c.confidence >= 0.5)) {
      throw new NotFoundError(
        `no steady tone found for --tone ${opts.toneHz} (looked in the first and last minute at ${opts.toneHz * 0.25}–${opts.toneHz * 4} Hz)`,
      );
    }
    return result;
  },
  findings(r) {
    const out: FindingDraft[] = [];
    if (r.method === null) {
      // The reason is the estimator's last note; no correction is offered.
      const why = r.notes[r.notes.length - 1] ?? 'no evidence strong enough to measure the playing speed';
      out.push({
        title: 'Speed not determined',
        sentence: why.charAt(0).toUpperCase() + why.slice(1) + '.',
        confidence: r.confidence,
        severity: 'info',
      });
      return out;
    }
    const u = r.uncertaintyPercent ?? 0;
    const how = r.method === 'hum' ? `${METHOD_WORDS.hum} (${r.mainsHz} Hz mains)` : r.method === 'tone' ? `${METHOD_WORDS.tone} (${r.toneHz} Hz)` : METHOD_WORDS.tuning;
    const drift = r.curve.factors.length > 1 ? (Math.max(...r.curve.factors) - Math.min(...r.curve.factors)) * 100 : 0;
    const within = Math.max(2 * u, 0.1);
    if (pct(r.factor) <= within) {
      out.push({
        title: 'Right speed',
        sentence: `The recording plays at its recorded speed (factor ${r.factor.toFixed(4)}, within ±${within.toFixed(2)} %), measured from ${how}.`,
        value: r.factor,
        unit: '×',
        confidence: r.confidence,
        severity: 'ok',
      });
    } else {
      const dir = r.factor > 1 ? 'fast' : 'slow';
      const pair = r.standardPair ? ` It looks ${r.standardPair}.` : '';
      out.push({
        title: `Played ${pct(r.factor).toFixed(2)} % ${dir}`,
        sentence:
          `The recording plays ${pct(r.factor).toFixed(2)} % ${dir} (factor ${r.factor.toFixed(4)}, ${r.cents >= 0 ? '+' : ''}${r.cents.toFixed(1)} cents, ±${u.toPrecision(2)} %), measured from ${how}; ` +
          `everything sounds ${dir === 'fast' ? 'higher and shorter' : 'lower and longer'} than it was recorded.${pair}`,
        value: r.factor,
        unit: '×',
        confidence: r.confidence,
        severity: 'warn',
        suggestion: { op: 'varispeed', params: { undo: +r.factor.toPrecision(7) } },
      });
    }
    if (drift > 0.1) {
      out.push({
        title: `Speed drifts ${drift.toFixed(2)} %`,
        sentence: `The speed changes by ${drift.toFixed(2)} % through the file (slow drift of the playback machine); following the measured curve removes it.`,
        value: drift,
        unit: '%',
        confidence: r.confidence,
        severity: 'warn',
        suggestion: { op: 'varispeed', params: { followCurve: true, ...(r.method === 'hum' && r.mainsHz ? { fromHum: String(r.mainsHz) } : {}) } },
      });
    }
    // Ambiguities the user can settle with an option.
    for (const n of r.notes.filter((x) => x.includes('give --'))) {
      out.push({ title: 'Note', sentence: n.charAt(0).toUpperCase() + n.slice(1) + '.', severity: 'info' });
    }
    return out;
  },

  // The batch report's columns and the check's gates.
  columns: [
    { header: 'speedFactor', get: (s) => roundTo(sectionNumber(s, 'speed', 'factor'), 6) },
    { header: 'speedCents', get: (s) => roundTo(sectionNumber(s, 'speed', 'cents'), 2) },
    { header: 'speedMethod', get: (s) => objectOf(s.speed)?.method as string | undefined },
  ],
  overview: [
    {
      heading: 'Speed cents',
      text: (s) => {
        const cents = sectionNumber(s, 'speed', 'cents');
        return cents === undefined ? '—' : `${cents >= 0 ? '+' : ''}${cents.toFixed(1)}`;
      },
    },
  ],
  metrics: [
    {
      id: 'speed.absCents', label: 'speed error', unit: 'cents', digits: 1,
      get: (s) => {
        const sp = objectOf(s.speed);
        const cents = numberOf(sp?.cents), conf = numberOf(sp?.confidence);
        return cents === undefined || (conf !== undefined && conf < 0.5) ? undefined : Math.abs(cents);
      },
      defaultRule: { warnAt: 10, failAt: 30, comment: 'Speed error of the transfer in cents (only when the speed analysis is at least 50 % confident).' },
    },
  ],
});
