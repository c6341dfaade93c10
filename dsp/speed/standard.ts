/**
 * Standard tape and disc speeds, and the explanation of a speed factor as "recorded at X, played
 * at Y" when it is within 0.5 % of a ratio of two standard speeds.
 *
 * Tape (IEC 60094 series): 15/16, 1⅞, 3¾, 7½, 15, 30 ips (each step exactly 2×).
 * Disc: 16⅔, 33⅓, 45, 78 rpm, and the synchronous-motor "78s": 3600/46 = 78.261 rpm on 60 Hz mains,
 * 3000/38.5 = 77.922 rpm on 50 Hz mains (REFERENCES.md §2).
 */
import { ratioToCents } from '../units.ts';

export interface StandardSpeed {
  readonly value: number;
  readonly label: string;
  readonly kind: 'tape' | 'disc';
}

export const TAPE_SPEEDS: readonly StandardSpeed[] = [
  { value: 15 / 16, label: '15/16 ips', kind: 'tape' },
  { value: 15 / 8, label: '1⅞ ips', kind: 'tape' },
  { value: 15 / 4, label: '3¾ ips', kind: 'tape' },
  { value: 15 / 2, label: '7½ ips', kind: 'tape' },
  { value: 15, label: '15 ips', kind: 'tape' },
  { value: 30, label: '30 ips', kind: 'tape' },
];

export const DISC_SPEEDS: readonly StandardSpeed[] = [
  { value: 50 / 3, label: '16⅔ rpm', kind: 'disc' },
  { value: 100 / 3, label: '33⅓ rpm', kind: 'disc' },
  { value: 45, label: '45 rpm', kind: 'disc' },
  { value: 78, label: '78 rpm', kind: 'disc' },
  { value: 3600 / 46, label: '78.26 rpm (60 Hz synchronous)', kind: 'disc' },
  { value: 3000 / 38.5, label: '77.92 rpm (50 Hz synchronous)', kind: 'disc' },
];

export interface StandardPair {
  recorded: StandardSpeed;
  played: StandardSpeed;
  /** played ÷ recorded */
  ratio: number;
  text: string;
}

/** Every pair of different standard speeds of the same medium, with ratio played ÷ recorded. */
export function standardPairs(): StandardPair[] {
  const out: StandardPair[] = [];
  for (const set of [TAPE_SPEEDS, DISC_SPEEDS]) {
    for (const recorded of set) {
      for (const played of set) {
        if (recorded === played) continue;
        const ratio = played.value / recorded.value;
        out.push({ recorded, played, ratio, text: `recorded at ${recorded.label}, played at ${played.label}` });
      }
    }
  }
  return out;
}

const PAIRS = standardPairs();
/** Preferred example when several pairs share a ratio (the most common machines first). */
const PREFERENCE = ['3¾ ips', '7½ ips', '33⅓ rpm', '45 rpm', '15 ips', '1⅞ ips', '78 rpm', '16⅔ rpm'];
const rank = (p: StandardPair) =>
  (PREFERENCE.indexOf(p.recorded.label) + 1 || 99) + (PREFERENCE.indexOf(p.played.label) + 1 || 99);

/**
 * The standard-speed explanations of `factor` within `tolerancePercent` (default 0.5 %), closest
 * first; ties by how common the speeds are. A factor closer to 1 than to any pair gives none.
 */
export function explainFactor(factor: number, tolerancePercent = 0.5): StandardPair[] {
  if (!(factor > 0)) return [];
  const dist = (r: number) => Math.abs(Math.log(factor / r));
  const tol = Math.log(1 + tolerancePercent / 100);
  const hits = PAIRS.filter((p) => dist(p.ratio) <= tol && dist(p.ratio) < dist(1));
  return hits.sort((a, b) => {
    const d = dist(a.ratio) - dist(b.ratio);
    return Math.abs(d) > 1e-9 ? d : rank(a) - rank(b);
  });
}

/** One line for the report: the closest explanation, with the others of the same ratio mentioned. */
export function standardPairText(factor: number): string | null {
  const hits = explainFactor(factor);
  if (hits.length === 0) return null;
  const best = hits[0]!;
  const same = hits.filter((h) => h !== best && Math.abs(h.ratio / best.ratio - 1) < 1e-9);
  const others = same.filter((h) => h.recorded.kind !== best.recorded.kind).slice(0, 1);
  return others.length ? `${best.text} (or ${others[0]!.recorded.label} played at ${others[0]!.played.label})` : best.text;
}

/**
 * Plausibility of a speed factor before looking at the recording: transfers are usually near the
 * right speed, and the big errors are mostly ratios of standard speeds. Used only to rank
 * hypotheses that explain the evidence equally well (50 vs 60 Hz hum, reference tones).
 * exp(−|cents|/600), doubled when the factor is within 0.5 % of a standard ratio.
 */
export function speedPrior(factor: number): number {
  const cents = Math.abs(ratioToCents(factor));
  const base = Math.exp(-cents / 600);
  return explainFactor(factor).length > 0 ? 2 * base : base;
}
