/**
 * Re-measurement as verdicts a person can read: for each step, the quantity it fixes in words and
 * units, before → after, and whether that is fixed, partly fixed, not fixed or made worse.
 * Pure: takes the analyses' results (measured by the worker on the step's own input and output,
 * over the material the step acted on) and returns words. The thresholds are the findings' own:
 * "right speed" within max(2 × uncertainty, 0.1 %), "channels aligned" within 2 µs, a reflection
 * worth reporting from gain 0.1, "reversed" from score 0.3 and "forward" below 0.
 */
import type { SpeedResult } from '../../../dsp/speed/estimate.ts';
import type { EchoAnalysis } from '../../../dsp/echo/detect.ts';
import type { AzimuthResult } from '../../../dsp/ops/azimuth.ts';
import type { ReversedResult } from '../../../dsp/reverse/detect.ts';
import { REVERSED_SCORE_THRESHOLD } from '../../../dsp/reverse/limits.ts';

export type Outcome = 'fixed' | 'partly fixed' | 'not fixed' | 'made worse' | 'as set' | 'not as set' | 'not determined';

export interface VerdictRow {
  /** The quantity in words ("Speed factor", "Reflection", "Inter-channel delay"). */
  readonly quantity: string;
  readonly before: string;
  readonly after: string;
  readonly outcome: Outcome;
  /** A sentence when the numbers need one (why not determined, what is new). */
  readonly note?: string;
}

/** The whole line as shown: "Speed factor 1.0293 → 1.0000: fixed". */
export const verdictText = (r: VerdictRow): string => `${r.quantity} ${r.before} → ${r.after}: ${r.outcome}`;

/** Outcomes that are bad news. */
export const isBad = (o: Outcome) => o === 'not fixed' || o === 'made worse' || o === 'not as set';

const f4 = (x: number) => x.toFixed(4);
const ms = (s: number) => `${(s * 1000).toFixed(2)} ms`;
const us = (s: number) => `${(s * 1e6).toFixed(1)} µs`;
const g2 = (g: number) => g.toFixed(2);

/**
 * Speed. `target` is 1 when the step undoes a measured speed error (its value is judged against
 * the recorded speed), or the factor the step was asked to apply (judged against before × factor).
 */
export function speedVerdict(before: SpeedResult, after: SpeedResult, target: { undo: true } | { undo: false; factor: number }): VerdictRow {
  const q = 'Speed factor';
  if (before.method === null) {
    return { quantity: q, before: 'not determined', after: after.method === null ? 'not determined' : f4(after.factor), outcome: 'not determined', note: 'No hum, reference tone or tuning gave enough evidence on the step\'s input.' };
  }
  if (after.method === null) {
    return { quantity: q, before: f4(before.factor), after: 'not determined', outcome: 'not determined', note: 'The evidence for the speed is too weak on the step\'s output.' };
  }
  const tol = Math.max(2 * ((after.uncertaintyPercent ?? 0) / 100), 0.001);
  const goal = target.undo ? 1 : before.factor * target.factor;
  const err = Math.abs(after.factor / goal - 1), was = Math.abs(before.factor / goal - 1);
  let outcome: Outcome;
  if (!target.undo) outcome = err <= tol ? 'as set' : 'not as set';
  else if (err <= tol) outcome = 'fixed';
  else if (err > was * 1.05 + tol) outcome = 'made worse';
  else if (err < was / 2) outcome = 'partly fixed';
  else outcome = 'not fixed';
  return {
    quantity: q,
    before: f4(before.factor),
    after: f4(after.factor),
    outcome,
    ...(target.undo ? {} : { note: `Asked for ×${f4(target.factor)}: ${f4(goal)} expected.` }),
  };
}

/** Delays within this of each other are the same reflection. */
const sameDelay = (a: number, b: number) => Math.abs(a - b) <= Math.max(1e-4, 0.01 * Math.abs(b));

/**
 * A reflection. `before` is the search on the step's input, `near` a search of the output limited
 * to around the reflection it had (reported even when the detector does not call it present: a
 * cancellation at the wrong delay leaves a reflection and its inverted neighbour, which the
 * single-echo model does not fit), `after` the output's free search.
 */
export function reflectionVerdict(before: EchoAnalysis, near: EchoAnalysis | null, after: EchoAnalysis): VerdictRow {
  const q = 'Reflection';
  const rb = before.reflection, ra = after.reflection;
  const found = (r: EchoAnalysis['reflection']) => r.present && r.delaySeconds !== null && r.gain !== null;
  const describe = (r: EchoAnalysis['reflection']) => `at ${ms(r.delaySeconds!)}, gain ${g2(r.gain!)}`;
  if (!found(rb)) {
    if (found(ra) && Math.abs(ra.gain!) >= 0.1) {
      return { quantity: q, before: 'none found', after: describe(ra), outcome: 'made worse', note: 'The step added a reflection the input did not have.' };
    }
    return { quantity: q, before: 'none found', after: found(ra) ? describe(ra) : 'none found', outcome: 'not determined', note: 'No reflection was measured on the step\'s input, so there was nothing to judge.' };
  }
  const gb = Math.abs(rb.gain!);
  const nr = near?.reflection;
  const nearGain = nr && nr.gain !== null && nr.delaySeconds !== null ? nr.gain : null;
  if (nr && nearGain !== null && (nr.present || Math.abs(nearGain) >= Math.max(0.1, 0.5 * gb))) {
    const moved = !sameDelay(nr.delaySeconds!, rb.delaySeconds!);
    const flipped = Math.sign(nearGain) !== Math.sign(rb.gain!);
    if (moved && flipped) {
      return {
        quantity: q, before: describe(rb), after: `inverted copy at ${ms(nr.delaySeconds!)}, gain ${g2(nearGain)}`, outcome: 'made worse',
        note: `The cancellation was made at ${ms(nr.delaySeconds!)}, not where the reflection is: it stays, and an inverted copy is added.`,
      };
    }
    const ratio = Math.abs(nearGain) / gb;
    return { quantity: q, before: describe(rb), after: `at ${ms(nr.delaySeconds!)}, gain ${g2(nearGain)}`, outcome: ratio <= 0.6 ? 'partly fixed' : 'not fixed' };
  }
  if (found(ra) && Math.abs(ra.gain!) >= 0.1 && !sameDelay(ra.delaySeconds!, rb.delaySeconds!)) {
    return { quantity: q, before: describe(rb), after: `none there; new ${describe(ra)}`, outcome: 'made worse', note: 'A reflection appeared that the input did not have.' };
  }
  const residual = nearGain !== null ? Math.abs(nearGain) : 0;
  if (residual <= Math.max(0.05, 0.15 * gb)) return { quantity: q, before: describe(rb), after: 'none found', outcome: 'fixed' };
  return { quantity: q, before: describe(rb), after: `gain ${g2(nearGain!)} left`, outcome: 'partly fixed' };
}

/** Print-through (a pre- or post-echo a tape turn away). */
export function printThroughVerdict(before: EchoAnalysis, after: EchoAnalysis): VerdictRow {
  const q = 'Print-through';
  const pb = before.printThrough, pa = after.printThrough;
  const describe = (p: EchoAnalysis['printThrough']) => `${Math.abs(p.delaySeconds!).toFixed(2)} s ${p.delaySeconds! < 0 ? 'before' : 'after'}, ${p.levelDb!.toFixed(1)} dB`;
  if (!pb.present || pb.delaySeconds === null || pb.levelDb === null) {
    return { quantity: q, before: 'none found', after: pa.present && pa.delaySeconds !== null && pa.levelDb !== null ? describe(pa) : 'none found', outcome: 'not determined', note: 'No print-through was measured on the step\'s input.' };
  }
  if (!pa.present || pa.delaySeconds === null || pa.levelDb === null) return { quantity: q, before: describe(pb), after: 'none found', outcome: 'fixed' };
  const same = Math.abs(pa.delaySeconds - pb.delaySeconds) < 0.01;
  if (!same) return { quantity: q, before: describe(pb), after: `new one ${describe(pa)}`, outcome: 'made worse' };
  const drop = pb.levelDb - pa.levelDb;
  return { quantity: q, before: describe(pb), after: describe(pa), outcome: drop >= 10 ? 'partly fixed' : drop < -1 ? 'made worse' : 'not fixed' };
}

/** The delay between the channels. */
export function azimuthVerdict(before: AzimuthResult, after: AzimuthResult): VerdictRow {
  const q = 'Inter-channel delay';
  if (before.coherence < 0.3 || after.coherence < 0.3) {
    return { quantity: q, before: us(before.delaySeconds), after: us(after.delaySeconds), outcome: 'not determined', note: 'The channels share too little to measure their delay.' };
  }
  const b = Math.abs(before.delaySeconds), a = Math.abs(after.delaySeconds);
  let outcome: Outcome;
  if (b < 2e-6) outcome = a < 2e-6 ? 'not determined' : 'made worse';
  else if (a < 2e-6) outcome = 'fixed';
  else if (a > b * 1.1 + 1e-6) outcome = 'made worse';
  else if (a < b / 2) outcome = 'partly fixed';
  else outcome = 'not fixed';
  return {
    quantity: q, before: us(before.delaySeconds), after: us(after.delaySeconds), outcome,
    ...(outcome === 'not determined' ? { note: 'The channels were already aligned on the step\'s input.' } : {}),
  };
}

/**
 * Direction of the channels a reverse step acted on. `judge` is true when the step was added to
 * put a channel found reversed the right way round; otherwise reversing is what was asked.
 */
export function reversedVerdicts(before: ReversedResult, after: ReversedResult, channels: readonly number[], judge: boolean): VerdictRow[] {
  return channels.map((ch) => {
    const q = `Channel ${ch} reversal score`;
    const b = before.channels.find((c) => c.channel === ch), a = after.channels.find((c) => c.channel === ch);
    if (!b || !a) return { quantity: q, before: '—', after: '—', outcome: 'not determined' as const };
    const words = (s: number) => (s >= REVERSED_SCORE_THRESHOLD ? 'plays backwards' : s < 0 ? 'plays forwards' : 'unclear');
    const before_ = `${b.score.toFixed(2)} (${words(b.score)})`, after_ = `${a.score.toFixed(2)} (${words(a.score)})`;
    let outcome: Outcome;
    if (!judge) outcome = Math.sign(a.score) === -Math.sign(b.score) || Math.abs(b.score) < 0.02 ? 'as set' : 'not as set';
    else if (b.score < REVERSED_SCORE_THRESHOLD) outcome = a.score >= REVERSED_SCORE_THRESHOLD ? 'made worse' : 'not determined';
    else if (a.score < 0) outcome = 'fixed';
    else if (a.score < REVERSED_SCORE_THRESHOLD) outcome = 'partly fixed';
    else outcome = 'not fixed';
    return { quantity: q, before: before_, after: after_, outcome };
  });
}

/** A change of length (a stretch, a varispeed), as set. */
export function durationVerdict(beforeSeconds: number, afterSeconds: number, expectedRatio: number | null): VerdictRow {
  const ratio = afterSeconds / beforeSeconds;
  const ok = expectedRatio === null || Math.abs(ratio / expectedRatio - 1) < 1e-3;
  return { quantity: 'Duration', before: `${beforeSeconds.toFixed(2)} s`, after: `${afterSeconds.toFixed(2)} s (×${ratio.toFixed(4)})`, outcome: ok ? 'as set' : 'not as set' };
}
