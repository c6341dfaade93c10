/**
 * Speed, drift and tuning. A speed claim is what a user sees: a warning "Played … fast/slow"
 * with a varispeed suggestion. Tolerances: hum and tone 0.05 % (the analyses issue's bar), tuning
 * 3 cents (common practice: the smallest pitch difference a trained ear notices is about 5 cents).
 */
import type { Judgement, Scorer } from '../types.ts';

const cents = (r: number) => 1200 * Math.log2(r);

/** Mean of a piecewise-linear curve over [0, seconds] (trapezoid rule on a fine grid; exact for lines). */
function curveMean(c: { timesSeconds: number[]; factors: number[] }, seconds: number): number {
  const at = (t: number) => {
    const ts = c.timesSeconds, fs = c.factors;
    if (t <= ts[0]!) return fs[0]!;
    for (let i = 1; i < ts.length; i++) if (t <= ts[i]!) return fs[i - 1]! + ((fs[i]! - fs[i - 1]!) * (t - ts[i - 1]!)) / (ts[i]! - ts[i - 1]!);
    return fs[fs.length - 1]!;
  };
  const n = 1000;
  let s = 0;
  for (let k = 0; k <= n; k++) s += (k === 0 || k === n ? 0.5 : 1) * at((k / n) * seconds);
  return s / n;
}
const tolPercent = (method: string | null | undefined) => (method === 'tuning' ? (2 ** (3 / 1200) - 1) * 100 : 0.05);

export const speedScorer: Scorer = {
  name: 'speed',
  bars: 'clean: false alarms ≤ 0.5 % of files, none claiming > 1 %; hum at −50 dBFS: ≥ 99 % found, error ≤ 0.05 %',
  judge(clip, r) {
    const s = r.sections.speed;
    if (!s && !r.findings.some((f) => f.op === 'speed')) return null;
    // A speed curve is given over its own time span (the corpus applies 1.000 → 1.030 over 60 s
    // to clips of 6–26 s): the clip's true average speed is the curve's mean over the clip.
    const truth = clip.truth.speedCurve ? curveMean(clip.truth.speedCurve, clip.durationSeconds) : clip.truth.speedFactor;
    const present = Math.abs(truth - 1) > 0.0005;
    const warn = r.findings.find((f) => f.op === 'speed' && f.severity === 'warn' && f.suggestion?.op === 'varispeed' && 'undo' in f.suggestion.params);
    const claimedFactor = warn ? Number(warn.suggestion!.params.undo) : undefined;
    const method: string | null = s?.method ?? null;
    const errPercent = s && method ? Math.abs(s.factor / truth - 1) * 100 : undefined;
    const j: Judgement = {
      present,
      inBar: clip.truth.hum !== null && clip.truth.hum.levelDbfs >= -50.5 && clip.truth.speedCurve === null,
      claimed: warn !== undefined,
      claimSize: claimedFactor !== undefined ? Math.abs(claimedFactor - 1) * 100 : undefined,
      note: s ? `method ${method}, factor ${s.factor?.toFixed(5)}, confidence ${s.confidence}; truth ${truth.toFixed(5)}` : 'no speed section',
    };
    if (errPercent !== undefined) {
      j.errors = { percent: errPercent };
      j.found = present ? errPercent <= tolPercent(method) && warn !== undefined : undefined;
      if (j.inBar) j.withinBar = method === 'hum' && errPercent <= 0.05;
      j.calibration = [{ confidence: s.confidence, true: errPercent <= tolPercent(method) }];
    } else if (present) j.found = false;
    return j;
  },
};

export const driftScorer: Scorer = {
  name: 'drift',
  bars: 'clean: no drift claimed where the speed is steady',
  judge(clip, r) {
    if (!r.sections.speed) return null;
    const claim = r.findings.find((f) => f.op === 'speed' && /drift/i.test(f.title) && f.severity !== 'ok' && f.severity !== 'info');
    const present = clip.truth.speedCurve !== null;
    return {
      present,
      claimed: claim !== undefined,
      found: present ? claim !== undefined : undefined,
      claimSize: claim ? Number(claim.value) : undefined,
      // A drift claim is true when the clip's speed does change along it.
      calibration: claim && claim.confidence !== undefined ? [{ confidence: claim.confidence, true: present }] : undefined,
      note: claim?.title,
    };
  },
};

/**
 * Tuning follows a uniform speed change: the tuning reading of an impaired clip minus that of its
 * clean original equals the applied change in cents (modulo a semitone), within ±3 cents, wherever
 * both readings are confident (≥ 0.5).
 */
export const tuningScorer: Scorer = {
  name: 'tuning',
  bars: 'follows a uniform speed change within ±3 cents (mod 100) wherever the reading is confident',
  judge(clip, r, ctx) {
    if (!r.sections.speed || clip.set !== 'impaired' || !clip.cleanId || clip.truth.speedCurve || clip.truth.flutter) return null;
    if (Math.abs(clip.truth.speedFactor - 1) < 1e-9) return null;
    const clean = ctx.result(clip.cleanId);
    const reading = (res: typeof r | undefined) =>
      (res?.sections.speed?.candidates as { method: string; factor: number; confidence: number }[] | undefined)?.find((c) => c.method === 'tuning' && c.confidence >= 0.5);
    const a = reading(clean);
    const b = reading(r);
    if (!a || !b) return { present: true, claimed: false, note: `no confident tuning reading (${a ? 'impaired' : 'clean'})` };
    const measured = cents(b.factor) - cents(a.factor);
    const expected = cents(clip.truth.speedFactor);
    let d = (measured - expected) % 100;
    if (d > 50) d -= 100;
    if (d < -50) d += 100;
    return {
      present: true,
      claimed: true,
      found: Math.abs(d) <= 3,
      withinBar: Math.abs(d) <= 3,
      errors: { cents: Math.abs(d) },
      calibration: [{ confidence: b.confidence, true: Math.abs(d) <= 3 }],
      note: `expected ${expected.toFixed(1)} c, measured ${measured.toFixed(1)} c`,
    };
  },
};
