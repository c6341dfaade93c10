/** Dropouts, clipping and bandwidth (levels and spectrum). */
import type { Judgement, Scorer } from '../types.ts';

interface Dropout { startSeconds: number; durationSeconds: number; depthDb: number }

export const dropoutScorer: Scorer = {
  name: 'dropouts',
  bars: 'exact-zero runs ≥ 5 ms inside programme all found, start ±1 ms; gaps between hits are not dropouts',
  judge(clip, r) {
    const lv = r.sections.levels;
    if (!lv) return null;
    const reported = (lv.dropouts ?? []) as Dropout[];
    // `dropouts` are runs of digital zeros; level dips are listed apart (levels.levelDips).
    const truth = clip.truth.dropouts.filter((t) => t.depthDb === null);
    const matches = (d: Dropout, t: (typeof truth)[number]) =>
      d.startSeconds < t.startSeconds + t.durationSeconds + 0.002 && d.startSeconds + d.durationSeconds > t.startSeconds - 0.002;
    const unmatched = reported.filter((d) => !truth.some((t) => matches(d, t)));
    const zeros = truth.filter((t) => t.depthDb === null && t.durationSeconds >= 0.005);
    const startErrors = zeros.map((t) => {
      const m = reported.filter((d) => matches(d, t));
      return m.length ? Math.min(...m.map((d) => Math.abs(d.startSeconds - t.startSeconds))) * 1000 : Infinity;
    });
    const foundZeros = startErrors.filter((e) => e <= 1).length;
    const j: Judgement = {
      present: truth.length > 0,
      inBar: zeros.length > 0,
      claimed: reported.length > 0,
      claimSize: unmatched.length,
      note: `reported ${reported.length} (${unmatched.length} not in the truth), zero runs found ${foundZeros}/${zeros.length}`,
    };
    if (truth.length > 0) {
      j.found = foundZeros === zeros.length;
      j.withinBar = j.found && unmatched.length === 0;
      const finite = startErrors.filter(Number.isFinite);
      if (finite.length) j.errors = { startMs: Math.max(...finite) };
    }
    // Dropouts reported where the truth has none are false alarms even on impaired clips.
    if (truth.length > 0 && unmatched.length > 0) j.note = 'EXTRA: ' + j.note;
    return j;
  },
};

export const clippingScorer: Scorer = {
  name: 'clipping',
  bars: 'clipping reported exactly where it was applied',
  judge(clip, r) {
    const lv = r.sections.levels;
    if (!lv) return null;
    const clipped = (lv.channels as { clippedSamples: number }[]).some((c) => c.clippedSamples > 0);
    return { present: clip.truth.clipped, claimed: clipped, found: clip.truth.clipped ? clipped : undefined };
  },
};

export const bandwidthScorer: Scorer = {
  name: 'bandwidth',
  bars: '`levels` and `spectrum` agree within 5 %; low-passed clips read their cut-off',
  judge(clip, r) {
    const a = r.sections.levels?.bandwidthHz;
    const b = r.sections.spectrum?.bandwidthHz;
    if (typeof a !== 'number' || typeof b !== 'number') return null;
    const disagree = Math.abs(a - b) / Math.max(a, b);
    const t = clip.truth.bandwidthHz;
    const j: Judgement = {
      present: t !== null,
      claimed: disagree > 0.05,
      claimSize: disagree * 100,
      errors: { disagreePercent: disagree * 100 },
      note: `levels ${a} Hz, spectrum ${b} Hz` + (t ? `; cut-off ${t} Hz` : ''),
    };
    if (t !== null) {
      const err = Math.abs(b - t) / t;
      j.errors!.cutoffPercent = err * 100;
      // A low-pass cut-off is exact; a source rate's Nyquist frequency (16 kHz speech stops at
      // 8 kHz) is only an upper bound of where its content stops.
      const cut = clip.steps.some((s) => s.type === 'lowpass');
      const ok = cut ? err <= 0.05 : b <= 1.05 * t && b >= 0.9 * t;
      j.found = ok && disagree <= 0.05;
      j.withinBar = j.found;
    }
    return j;
  },
};
