/** The Compare headline, pure: where the spectrum changed most, where there is programme to change. */
import type { SpectrumPair } from '../worker/protocol.ts';

export interface Change {
  readonly db: number;
  readonly hz: number;
}

/**
 * Largest before/after difference of the long-term spectra in bins that carry programme: from
 * `lowHz`, at least one of the two above `floorDb`, and at or below `bandwidthHz` (the effective
 * bandwidth the spectrum analysis found: above it there is only hiss and the converter's floor, and
 * a difference there says nothing about the correction). Null when there is no after spectrum.
 */
export function largestChange(sp: SpectrumPair, bandwidthHz: number | null, lowHz = 30, floorDb = -100): Change | null {
  if (!sp.afterDb) return null;
  const top = bandwidthHz ?? Infinity;
  let best = 0, at = 0;
  for (let k = 1; k < sp.beforeDb.length; k++) {
    const f = sp.frequenciesHz[k]!;
    if (f < lowHz || f > top || Math.max(sp.beforeDb[k]!, sp.afterDb[k]!) < floorDb) continue;
    const d = sp.afterDb[k]! - sp.beforeDb[k]!;
    if (Math.abs(d) > Math.abs(best)) { best = d; at = f; }
  }
  return { db: best, hz: at };
}

/**
 * The programme's bandwidth in the compared material: the original's effective bandwidth, and no
 * more than it becomes after a chain that moves every frequency (a varispeed down lowers it).
 */
export function programmeBandwidthHz(originalBandwidthHz: number | null, frequencyScale: number | null): number | null {
  if (originalBandwidthHz === null || !(originalBandwidthHz > 0)) return null;
  return originalBandwidthHz * Math.min(1, frequencyScale ?? 1);
}
