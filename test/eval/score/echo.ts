/**
 * Reflections (`echo`) and print-through (`printThrough`), judged on the JSON sections.
 * Bars from the analyses issue: reflections |g| ≥ 0.2, 1 ms ≤ τ ≤ 300 ms found ≥ 95 %, delay
 * error ≤ 0.1 sample, gain error ≤ 0.01; print-through at −40 dB found ≥ 95 %, ±2 ms, ±3 dB.
 */
import type { Judgement, Scorer } from '../types.ts';

export const echoScorer: Scorer = {
  name: 'echo',
  bars: 'clean: false alarms ≤ 1 %; |g| ≥ 0.2, 1–300 ms: ≥ 95 % found, delay ≤ 0.1 sample, gain ≤ 0.01',
  judge(clip, r) {
    const e = r.sections.echo;
    if (!e) return null;
    const t = clip.truth.reflection;
    const claimed = e.present === true;
    const j: Judgement = {
      present: t !== null,
      inBar: t !== null && Math.abs(t.gain) >= 0.2 && t.delaySeconds >= 0.001 && t.delaySeconds <= 0.3,
      claimed,
      note: `${claimed ? 'claims' : e.present === null ? 'not determined' : 'none'}: τ ${e.delaySeconds != null ? (e.delaySeconds * 1000).toFixed(3) + ' ms' : '–'}, g ${e.gain ?? '–'}, confidence ${e.confidence}` +
        (t ? `; truth τ ${(t.delaySeconds * 1000).toFixed(3)} ms, g ${t.gain}` : ''),
      claimSize: claimed ? Math.abs(e.gain) : undefined,
    };
    if (claimed && t) {
      const dSamples = Math.abs(e.delaySeconds - t.delaySeconds) * clip.sampleRateHz;
      j.found = dSamples <= 0.5;
      if (j.found) {
        j.errors = { delaySamples: dSamples, gain: Math.abs(e.gain - t.gain) };
        j.withinBar = dSamples <= 0.1 && Math.abs(e.gain - t.gain) <= 0.01;
      }
    } else if (t) j.found = false;
    if (claimed && typeof e.confidence === 'number') j.calibration = [{ confidence: e.confidence, true: t !== null && j.found === true }];
    return j;
  },
};

export const printThroughScorer: Scorer = {
  name: 'print-through',
  bars: 'clean: false alarms ≤ 0.5 %; −40 dB in quiet passages: ≥ 95 % found, delay ±2 ms, level ±3 dB; present ⇒ delay and level given',
  judge(clip, r) {
    const p = r.sections.printThrough;
    if (!p) return null;
    const t = clip.truth.printThrough;
    const claimed = p.present === true;
    const j: Judgement = {
      present: t !== null,
      inBar: t !== null && t.levelDb >= -40.5,
      claimed,
      note: `${claimed ? 'claims' : p.present === null ? 'not determined' : 'none'}: ${p.delaySeconds ?? '–'} s at ${p.levelDb ?? '–'} dB, confidence ${p.confidence}` + (t ? `; truth ${t.delaySeconds} s at ${t.levelDb} dB` : ''),
      claimSize: claimed && typeof p.levelDb === 'number' ? p.levelDb : undefined,
    };
    if (claimed && (typeof p.levelDb !== 'number' || typeof p.delaySeconds !== 'number')) {
      j.note = 'CONTRACT: present with a null delay or level; ' + j.note;
      j.found = false;
    } else if (claimed && t) {
      const dMs = Math.abs(p.delaySeconds - t.delaySeconds) * 1000;
      const dDb = Math.abs(p.levelDb - t.levelDb);
      j.found = dMs <= 2 && dDb <= 3;
      j.withinBar = j.found;
      j.errors = { delayMs: dMs, levelDb: dDb };
    } else if (t) j.found = false;
    if (claimed && typeof p.confidence === 'number') j.calibration = [{ confidence: p.confidence, true: j.found === true }];
    return j;
  },
};
