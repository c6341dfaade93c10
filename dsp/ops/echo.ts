/**
 * `echo`: finds one reflection (0.5–500 ms after the direct sound; a voice near a hard wall or a
 * desk) and print-through (a faint copy of loud passages 0.3–4 s before or after them), with
 * delay, strength and confidence. Method: dsp/echo/detect.ts.
 */
import type { EchoAnalysis } from '../echo/detect.ts';

const algorithms = () => import('../echo/detect.ts');
import { defineAnalysis, type FindingDraft } from './types.ts';
import { numberOf, objectOf, roundTo, sectionNumber } from './sections.ts';
import { gainToDb } from '../units.ts';

const round = (v: number | null, digits: number): number | null => (v === null ? null : Number(v.toFixed(digits)));

export const echo = defineAnalysis<EchoAnalysis>()({
  kind: 'analysis',
  name: 'echo',
  key: 'echo',
  title: 'Echo',
  summary: 'Find one strong reflection (delay to a fraction of a sample, gain) and print-through before or after loud passages.',
  params: [
    {
      name: 'rangeSeconds',
      flag: 'range',
      type: 'range',
      label: 'Delay range',
      help: 'Delays to search for a reflection, MIN:MAX in seconds (default 0.0005:0.5).',
      unit: 's',
      min: 0,
      max: 10,
    },
    {
      name: 'channel',
      flag: 'channel',
      type: 'integer',
      label: 'Channel',
      help: 'Analyse only this channel (1 = first); by default the channels are averaged.',
      min: 1,
      max: 64,
    },
  ],
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, params, ctx) {
    const { analyseEcho } = await algorithms();
    const ch = params.channel;
    return analyseEcho(source, {
      rangeSeconds: params.rangeSeconds,
      channel: ch === undefined ? -1 : ch - 1,
      signal: ctx.signal,
      progress: (f) => ctx.progress(f),
      warn: (m) => ctx.warn(m),
    });
  },
  toJson(r) {
    // Delay and strength are printed only for what is present; the strongest candidate of a
    // search that found nothing is not a measurement anyone should act on.
    // present is true, false, or null when a peak was seen but the evidence does not decide.
    const rp = r.reflection.present === true && r.reflection.delaySeconds !== null && r.reflection.gain !== null;
    const pp = r.printThrough.present === true && r.printThrough.delaySeconds !== null && r.printThrough.levelDb !== null;
    return {
      echo: {
        present: rp ? true : r.reflection.present === null ? null : false,
        delaySeconds: rp ? round(r.reflection.delaySeconds, 9) : null,
        gain: rp ? round(r.reflection.gain, 5) : null,
        confidence: round(r.reflection.confidence, 3),
        // Only when a frequency-dependent reflection fits clearly better than the single gain.
        ...(r.reflection.filter
          ? { filter: { firstTapDelaySeconds: round(r.reflection.filter.firstTapDelaySeconds, 9), taps: r.reflection.filter.taps.map((t) => Number(t.toFixed(6))) } }
          : {}),
      },
      printThrough: {
        present: pp ? true : r.printThrough.present === null ? null : false,
        delaySeconds: pp ? round(r.printThrough.delaySeconds, 7) : null,
        levelDb: pp ? round(r.printThrough.levelDb, 2) : null,
        confidence: round(r.printThrough.confidence, 3),
      },
    };
  },
  findings(r) {
    const out: FindingDraft[] = [];
    const rf = r.reflection;
    if (rf.present === true && rf.delaySeconds !== null && rf.gain !== null) {
      const ms = rf.delaySeconds * 1000;
      const db = gainToDb(rf.gain);
      out.push({
        title: `Reflection ${ms.toFixed(1)} ms after the direct sound`,
        sentence:
          `A reflection ${ms.toFixed(1)} ms after the direct sound at ${db.toFixed(1)} dB` +
          `${rf.gain < 0 ? ' with inverted polarity' : ''} (gain ${rf.gain.toFixed(3)}): ${(343 * rf.delaySeconds).toFixed(2)} m of extra ` +
          `path, as from a hard wall or desk about ${((343 * rf.delaySeconds) / 2).toFixed(2)} m away` +
          (rf.filter ? `; it colours the sound (a ${rf.filter.taps.length}-tap filter fits it better than one gain)` : '') +
          '; it can be cancelled.',
        value: Number(ms.toFixed(3)),
        unit: 'ms',
        confidence: rf.confidence,
        severity: Math.abs(rf.gain) >= 0.1 ? 'warn' : 'info',
        // A reflection that a short filter fits better is cancelled with that filter, which unecho
        // measures itself: the suggestion narrows its search to this reflection instead of fixing
        // one gain.
        suggestion: {
          op: 'unecho',
          params: rf.filter
            ? { rangeSeconds: [Number((rf.delaySeconds * 0.8).toPrecision(6)), Number((rf.delaySeconds * 1.25).toPrecision(6))] }
            : { delaySeconds: rf.delaySeconds, gain: rf.gain },
        },
      });
    } else if (rf.present === null && rf.reason) {
      out.push({
        title: 'Reflection not determined',
        sentence: `Not determined: ${rf.reason}.`,
        confidence: 0,
        severity: 'info',
      });
    } else {
      // A floor whose own reflection differs from the programme's (e.g. hiss after an echo was
      // cancelled carries the inverse echo) is said, so that it is not mistaken for the programme's.
      const floor =
        rf.floorGain !== null && Math.abs(rf.floorGain) >= 0.1 && rf.delaySeconds !== null
          ? ` The quiet stretches alone show one ${(rf.delaySeconds * 1000).toFixed(1)} ms after themselves (gain ${rf.floorGain.toFixed(2)}) that the ` +
            'programme does not have: noise added after a reflection shows this once the reflection is cancelled; it stays at the level of that noise.'
          : '';
      out.push({
        title: 'No single strong reflection',
        sentence:
          `No single strong reflection was found between ${(r.rangeSeconds[0] * 1000).toFixed(1)} ms and ${(r.rangeSeconds[1] * 1000).toFixed(0)} ms.${floor}` +
          (rf.reason ? ` (A peak was set aside: ${rf.reason}.)` : ''),
        confidence: 1 - rf.confidence,
        severity: 'ok',
      });
    }
    const pt = r.printThrough;
    if (pt.present === null && pt.reason) {
      out.push({ title: 'Print-through not determined', sentence: `Not determined: ${pt.reason}.`, confidence: 0, severity: 'info' });
    }
    if (pt.present === true && pt.delaySeconds !== null && pt.levelDb !== null && pt.gain !== null) {
      const when = pt.delaySeconds < 0 ? 'before' : 'after';
      out.push({
        title: `Print-through ${Math.abs(pt.delaySeconds).toFixed(2)} s ${when} loud passages`,
        sentence:
          `A faint copy of the loud passages ${Math.abs(pt.delaySeconds).toFixed(2)} s ${when} them at ${pt.levelDb.toFixed(1)} dB: ` +
          `print-through between layers of the tape (${pt.delaySeconds < 0 ? 'a pre-echo' : 'a post-echo'}); it can be cancelled.`,
        value: Number(pt.delaySeconds.toFixed(4)),
        unit: 's',
        confidence: pt.confidence,
        severity: 'info',
        suggestion: { op: 'unecho', params: { delaySeconds: pt.delaySeconds, gain: pt.gain } },
      });
    }
    return out;
  },

  // The batch report's columns and the check's gates (delay and strength only for what is present).
  columns: [
    { header: 'echoPresent', get: (s) => objectOf(s.echo)?.present as boolean | undefined },
    { header: 'echoDelaySeconds', get: (s) => (objectOf(s.echo)?.present === true ? roundTo(sectionNumber(s, 'echo', 'delaySeconds'), 6) : undefined) },
    { header: 'echoGain', get: (s) => (objectOf(s.echo)?.present === true ? roundTo(sectionNumber(s, 'echo', 'gain'), 4) : undefined) },
    { header: 'printThroughPresent', get: (s) => objectOf(s.printThrough)?.present as boolean | undefined },
    { header: 'printThroughDelaySeconds', get: (s) => (objectOf(s.printThrough)?.present === true ? roundTo(sectionNumber(s, 'printThrough', 'delaySeconds'), 4) : undefined) },
    { header: 'printThroughLevelDb', get: (s) => (objectOf(s.printThrough)?.present === true ? roundTo(sectionNumber(s, 'printThrough', 'levelDb'), 1) : undefined) },
  ],
  metrics: [
    {
      id: 'echo.gainDb', label: 'echo level', unit: 'dB', digits: 1,
      get: (s) => {
        const e = objectOf(s.echo);
        const g = numberOf(e?.gain);
        return e?.present === true && g !== undefined && g !== 0 ? gainToDb(g) : undefined;
      },
      defaultRule: { warnAt: -30, failAt: -15, comment: 'Level of a detected echo relative to the direct sound.' },
    },
    {
      id: 'printThrough.levelDb', label: 'print-through level', unit: 'dB', digits: 1,
      get: (s) => {
        const p = objectOf(s.printThrough);
        return p?.present === true ? numberOf(p.levelDb) : undefined;
      },
      defaultRule: { warnAt: -50, failAt: -35, comment: 'Level of detected print-through relative to the programme.' },
    },
  ],
});
