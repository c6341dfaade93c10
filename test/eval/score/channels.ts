/** Azimuth (inter-channel delay) and reversed channels. */
import type { Judgement, Scorer } from '../types.ts';

/** Largest delay a head can make when the format is not given (common practice: about 2° on quarter-track tape at 1⅞ ips). */
const HEAD_LIMIT_SECONDS = 1e-3;

export const azimuthScorer: Scorer = {
  name: 'azimuth',
  bars: '"head azimuth error" never claimed for delays no head makes; head-sized delays measured within 0.5 µs or 2 %',
  judge(clip, r) {
    const a = r.sections.azimuth;
    if (!a || clip.channels < 2) return null;
    const t = clip.truth.interChannelDelaySeconds;
    const claim = r.findings.find((f) => f.op === 'azimuth' && /azimuth/i.test(f.sentence + f.title) && (f.severity === 'warn' || f.severity === 'fail') && !/aligned|too different/i.test(f.title));
    const measured = typeof a.delaySeconds === 'number' ? a.delaySeconds : null;
    const j: Judgement = {
      present: t !== null,
      inBar: t !== null && Math.abs(t) <= HEAD_LIMIT_SECONDS,
      claimed: claim !== undefined,
      claimSize: measured !== null ? Math.abs(measured) * 1e6 : undefined,
      note: `measured ${measured !== null ? (measured * 1e6).toFixed(2) + ' µs' : '–'}, coherence ${a.coherence?.toFixed?.(2)}` + (t !== null ? `; truth ${(t * 1e6).toFixed(2)} µs` : '') + (claim ? `; says "${claim.title}"` : ''),
    };
    if (t !== null && measured !== null) {
      const err = Math.abs(measured - t);
      j.errors = { microseconds: err * 1e6 };
      // Measured right, and recognised as a head's delay (not set aside as stereo programme).
      j.found = err <= Math.max(0.5e-6, 0.02 * Math.abs(t)) && (a.verdict === undefined || a.verdict === 'head');
      j.withinBar = j.found;
    } else if (t !== null) j.found = false;
    // A claimed azimuth error with a delay no head makes is always false.
    if (claim && measured !== null && Math.abs(measured) > HEAD_LIMIT_SECONDS) j.present = false;
    return j;
  },
};

export const reversedScorer: Scorer = {
  name: 'reversed',
  bars: 'clean: 0 false; percussive from 1 s, voice and music from 2 s: ≥ 90 % found; a reversed channel never read as forward',
  judge(clip, r) {
    const rv = r.sections.reversed;
    if (!rv) return null;
    const chans = rv.channels as { channel: number; likely: boolean | null; score: number }[];
    const truth = new Set(clip.truth.reversedChannels.map((c) => c + 1));
    const wrong = chans.filter((c) => c.likely === true && !truth.has(c.channel));
    const hit = chans.filter((c) => c.likely === true && truth.has(c.channel));
    // A reversed channel reported as playing forwards is a confident wrong answer (worse than "not determined").
    const readForward = chans.filter((c) => c.likely === false && truth.has(c.channel));
    const minSeconds = clip.kind === 'drums' || clip.kind === 'effect' ? 1 : 2;
    // Calibration: each "plays backwards" finding with its confidence, true when that channel is reversed.
    const calibration = r.findings
      .filter((f) => f.op === 'reversed' && f.severity === 'warn' && typeof f.confidence === 'number')
      .map((f) => {
        const ch = Number(/Channel (\d+)/.exec(f.title)?.[1]);
        return { confidence: f.confidence!, true: truth.has(ch) };
      });
    return {
      present: truth.size > 0,
      inBar: truth.size > 0 && clip.durationSeconds >= minSeconds,
      claimed: chans.some((c) => c.likely === true),
      found: truth.size > 0 ? hit.length === truth.size && wrong.length === 0 : undefined,
      withinBar: truth.size > 0 ? hit.length === truth.size && wrong.length === 0 : undefined,
      ...(truth.size > 0 ? { errors: { channelsReadForward: readForward.length } } : {}),
      calibration,
      note: chans.map((c) => `ch${c.channel} ${c.likely === null ? 'not determined' : c.likely ? 'reversed' : 'forward'} ${c.score?.toFixed?.(2)}`).join(', ') + ` (truth ${[...truth].join(',') || 'none'})`,
      // A false "reversed" on a clip whose truth has reversed channels elsewhere is still false.
      ...(wrong.length > 0 && truth.size > 0 ? { claimSize: wrong.length } : {}),
    };
  },
};
