/** The time map and the onset detector on their own. */
import { describe, expect, it } from 'vitest';
import { TimeMap } from '../../dsp/stretch/time-map.ts';
import { SpectralFluxOnsets, ONSET_LOOKAHEAD_FRAMES } from '../../dsp/stretch/onsets.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

describe('TimeMap', () => {
  it('maps an onset at t0 to R·t0 with slope 1 around it, and is non-decreasing', () => {
    // Source: definition of the map (average line σ = R·α; zones α = σ − (round(R·t0) − t0)).
    const build = () => {
      const m = new TimeMap(2, 300, 16);
      expect(m.tryOnset(1000)).toBe(true);
      expect(m.tryOnset(1200)).toBe(false); // its zone would overlap the first one
      expect(m.tryAnchor(4000)).toBe(true);
      m.end(6000);
      return m;
    };
    let map = build();
    map.locate(2000);
    expect(map.alpha).toBe(1000);
    expect(map.zoneOnset).toBe(1000);
    map.locate(2250);
    expect(map.alpha).toBe(1250);
    map = build(); // locate() takes non-decreasing σ
    let prev = -Infinity;
    for (let s = -500; s <= 13000; s += 37) {
      map.locate(s);
      expect(map.alpha).toBeGreaterThanOrEqual(prev);
      prev = map.alpha;
    }
    map.locate(12000);
    expect(map.alpha).toBe(6000); // the end anchor (R·N, N)
  });
});

describe('SpectralFluxOnsets', () => {
  const fs = 24000;
  const analyseAll = (x: Float64Array) => {
    const d = new SpectralFluxOnsets({ sampleRateHz: fs });
    const found: number[] = [];
    for (let s = 0; s + d.frameSize <= x.length; s += d.hopSize) {
      d.analyze(x.subarray(s, s + d.frameSize));
      const j = d.decide();
      if (j >= 0) found.push(j);
    }
    return { d, found };
  };

  it('finds a click in silence once, in a frame that contains it, and reads ~1 there', () => {
    // Source: construction; the normalised flux is 1 when every bin rises from silence.
    const x = new Float64Array(fs);
    x[9000] = 0.5;
    const { d, found } = analyseAll(x);
    expect(found).toHaveLength(1);
    const j = found[0]!;
    expect(j * d.hopSize).toBeLessThanOrEqual(9000);
    expect(j * d.hopSize + d.frameSize).toBeGreaterThan(9000);
    expect(ONSET_LOOKAHEAD_FRAMES).toBe(2);
  });

  it('finds nothing in white noise, a steady chord or vibrato', () => {
    // Source: construction (stationary signals have no onsets).
    const g = gaussian(seededRng(9));
    const signals = [
      Float64Array.from({ length: 3 * fs }, () => 0.1 * g()),
      Float64Array.from({ length: 3 * fs }, (_, i) => 0.15 * (Math.sin((2 * Math.PI * 220 * i) / fs) + Math.sin((2 * Math.PI * 277.18 * i) / fs) + Math.sin((2 * Math.PI * 329.63 * i) / fs))),
      Float64Array.from({ length: 3 * fs }, (_, i) => 0.3 * Math.sin((2 * Math.PI * 440 * i) / fs + 3 * Math.sin((2 * Math.PI * 5 * i) / fs))),
    ];
    for (const x of signals) {
      // The very first frames see the signal start from nothing; count onsets after 0.1 s.
      const { d, found } = analyseAll(x);
      expect(found.filter((j) => j * d.hopSize > 0.1 * fs)).toEqual([]);
    }
  });
});
