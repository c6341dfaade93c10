/**
 * Which segment cells count when a series' level is judged (dsp/speed/hum.ts): only those of the
 * harmonics judged in ≥ 30 % of the segments, the ones persistenceEvidence weighs. A harmonic
 * glimpsed in a segment or two (a drum's ringing passing over it) says nothing about the series'
 * level.
 */
import { describe, expect, it } from 'vitest';
import { judgedInconsistentShare, persistenceEvidence } from '../../dsp/speed/hum.ts';
import type { LinePersistence } from '../../dsp/speed/harmonic-track.ts';

const persistence = (perHarmonic: { coverage: number; inconsistentShare: number }[]): LinePersistence => {
  // The overall figures as linePersistence gives them: cells judged and cells off the level.
  const S = 16;
  const judged = perHarmonic.reduce((a, x) => a + x.coverage * S, 0);
  const bad = perHarmonic.reduce((a, x) => a + x.coverage * S * x.inconsistentShare, 0);
  return { segments: S, coverage: 1, inconsistentShare: judged ? bad / judged : 1, judged, perHarmonic };
};

describe('judgedInconsistentShare', () => {
  it('counts only the harmonics judged in ≥ 30 % of the segments, each by its judged cells', () => {
    // Fundamental judged in all 16 segments, 1 off its level; 3rd harmonic in 8, none off; 4th and
    // 5th glimpsed in one segment each, both off.
    const p = persistence([
      { coverage: 1, inconsistentShare: 1 / 16 },
      { coverage: 0.5, inconsistentShare: 0 },
      { coverage: 1 / 16, inconsistentShare: 1 },
      { coverage: 1 / 16, inconsistentShare: 1 },
    ]);
    // Source: exact arithmetic — (16·1/16 + 8·0) / (16 + 8) = 1/24; the overall share counts
    // the glimpses too: (1 + 0 + 1 + 1) / 26.
    expect(judgedInconsistentShare(p)).toBeCloseTo(1 / 24, 12);
    expect(p.inconsistentShare).toBeCloseTo(3 / 26, 12);
    // The same cells persistenceEvidence weighs: its bad share is this one.
    // Source: its definition, clamp01((0.25 − badShare)/0.1) × clamp01((coverage − 0.3)/0.3).
    expect(persistenceEvidence([1, 3, 4, 5], p)).toBeCloseTo(Math.min(1, (0.25 - 1 / 24) / 0.1), 12);
  });

  it('is 1 (nothing shown) when no harmonic is judged in 30 % of the segments', () => {
    // Source: definition (no judged cells, no evidence of a level).
    expect(judgedInconsistentShare(persistence([{ coverage: 0.25, inconsistentShare: 0 }, { coverage: 0.1, inconsistentShare: 0 }]))).toBe(1);
  });
});
