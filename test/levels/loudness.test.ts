/**
 * Loudness and true peak against ITU-R BS.1770-4 and the EBU Tech 3341 / 3342 test signals,
 * generated here from their published definitions (stereo 1 kHz sines at 48 kHz unless stated;
 * "−23 dBFS" is the sine's peak level, so a stereo −23 dBFS 1 kHz sine reads −22.993 LUFS).
 */
import { describe, expect, it } from 'vitest';
import { kWeightingCoefficients, kWeightingGainDb } from '../../dsp/levels/k-weighting.ts';
import { LoudnessMeter } from '../../dsp/levels/loudness.ts';
import { TruePeakMeter, truePeakPhases, HALF_SPAN } from '../../dsp/levels/true-peak.ts';
import { seededRng, gaussian } from '../helpers/rng.ts';

const FS = 48000;

/** Concatenated sine segments [levelDbfs, seconds] at `hz`, the same on `channels` channels. */
function segments(parts: [number, number][], opts: { hz?: number; fs?: number; channels?: number } = {}): Float64Array[] {
  const fs = opts.fs ?? FS, hz = opts.hz ?? 1000, nCh = opts.channels ?? 2;
  const total = parts.reduce((s, [, sec]) => s + Math.round(sec * fs), 0);
  const x = new Float64Array(total);
  let at = 0;
  for (const [db, sec] of parts) {
    const a = Math.pow(10, db / 20);
    const n = Math.round(sec * fs);
    for (let i = 0; i < n; i++) x[at + i] = a * Math.sin((2 * Math.PI * hz * (at + i)) / fs);
    at += n;
  }
  return Array.from({ length: nCh }, () => x);
}

function measure(channels: Float64Array[], fs = FS) {
  const m = new LoudnessMeter(fs, channels.length, channels[0]!.length);
  // Odd block size so sub-block boundaries fall inside blocks.
  const step = 12345;
  for (let i = 0; i < channels[0]!.length; i += step) m.push(channels.map((c) => c.subarray(i, i + step)));
  return m.result();
}

describe('K-weighting (BS.1770-4 Annex 1)', () => {
  it('reproduces the 48 kHz coefficient tables', () => {
    // Source: ITU-R BS.1770-4 Annex 1, Tables 1 and 2 (values as listed in REFERENCES.md §8).
    const [shelf, hp] = kWeightingCoefficients(48000);
    const expectClose = (got: readonly number[], want: number[]) =>
      want.forEach((w, i) => expect(Math.abs(got[i]! - w)).toBeLessThan(1e-10));
    expectClose([shelf.b0, shelf.b1, shelf.b2], [1.53512485958697, -2.69169618940638, 1.19839281085285]);
    expectClose([shelf.a1, shelf.a2], [-1.69065929318241, 0.73248077421585]);
    expectClose([hp.b0, hp.b1, hp.b2], [1, -2, 1]);
    expectClose([hp.a1, hp.a2], [-1.99004745483398, 0.99007225036621]);
  });

  it('re-derives the filters at 44.1 kHz', () => {
    // Source: REFERENCES.md §8 [DERIVED from the libebur128 parameters]: 44.1 kHz denominators.
    const [shelf, hp] = kWeightingCoefficients(44100);
    expect(shelf.a1).toBeCloseTo(-1.66365511, 7);
    expect(shelf.a2).toBeCloseTo(0.71259543, 7);
    expect(hp.a1).toBeCloseTo(-1.98916967, 7);
    expect(hp.a2).toBeCloseTo(0.98919904, 7);
  });

  it('has the published gains', () => {
    // Source: REFERENCES.md §8 [DERIVED]: +0.691 dB at 997 Hz (the −0.691 constant), +0.698 at 1 kHz,
    // −1.13 at 100 Hz, −13.28 at 20 Hz, +3.97 at 4 kHz, +4.04 at 10 kHz.
    const cases: [number, number][] = [[997, 0.691], [1000, 0.698], [100, -1.13], [20, -13.28], [4000, 3.97], [10000, 4.04]];
    for (const [hz, db] of cases) expect(kWeightingGainDb(hz, 48000)).toBeCloseTo(db, 2);
  });
});

describe('integrated loudness: EBU Tech 3341 cases', () => {
  // Source: EBU Tech 3341 (v4, 2016) Table 1 expected readings, via REFERENCES.md §8; tolerance ±0.1 LU.
  it('case 1: −23 dBFS, 20 s → M, S, I = −23.0', () => {
    const r = measure(segments([[-23, 20]]));
    expect(Math.abs(r.integratedLufs + 23)).toBeLessThan(0.1);
    expect(Math.abs(r.maxMomentaryLufs + 23)).toBeLessThan(0.1);
    expect(Math.abs(r.maxShortTermLufs + 23)).toBeLessThan(0.1);
  });
  it('case 2: −33 dBFS, 20 s → −33.0', () => {
    expect(Math.abs(measure(segments([[-33, 20]])).integratedLufs + 33)).toBeLessThan(0.1);
  });
  it('case 3: −36/−23/−36 dBFS, 10/60/10 s → −23.0 (relative gate)', () => {
    expect(Math.abs(measure(segments([[-36, 10], [-23, 60], [-36, 10]])).integratedLufs + 23)).toBeLessThan(0.1);
  });
  it('case 4: −72/−36/−23/−36/−72 dBFS, 10/10/60/10/10 s → −23.0 (both gates)', () => {
    const r = measure(segments([[-72, 10], [-36, 10], [-23, 60], [-36, 10], [-72, 10]]));
    expect(Math.abs(r.integratedLufs + 23)).toBeLessThan(0.1);
  });
  it('case 5: −26/−20/−26 dBFS, 20/20.1/20 s → −23.0', () => {
    expect(Math.abs(measure(segments([[-26, 20], [-20, 20.1], [-26, 20]])).integratedLufs + 23)).toBeLessThan(0.1);
  });
  it('case 6: 5.0 channels L,R −28, C −24, Ls,Rs −30 dBFS → −23.0 (surround weights 1.41)', () => {
    const lr = segments([[-28, 20]], { channels: 1 })[0]!;
    const c = segments([[-24, 20]], { channels: 1 })[0]!;
    const s = segments([[-30, 20]], { channels: 1 })[0]!;
    expect(Math.abs(measure([lr, lr, c, s, s]).integratedLufs + 23)).toBeLessThan(0.1);
  });
  it('case 9: 5 × (1.34 s @ −20, 1.66 s @ −30) → short-term −23.0', () => {
    const parts: [number, number][] = [];
    for (let i = 0; i < 5; i++) parts.push([-20, 1.34], [-30, 1.66]);
    expect(Math.abs(measure(segments(parts)).maxShortTermLufs + 23)).toBeLessThan(0.1);
  });
  it('case 12: 25 × (0.18 s @ −20, 0.22 s @ −30) → momentary −23.0', () => {
    const parts: [number, number][] = [];
    for (let i = 0; i < 25; i++) parts.push([-20, 0.18], [-30, 0.22]);
    expect(Math.abs(measure(segments(parts)).maxMomentaryLufs + 23)).toBeLessThan(0.1);
  });
  it('is independent of the sample rate (case 1 at 44.1 kHz)', () => {
    expect(Math.abs(measure(segments([[-23, 20]], { fs: 44100 }), 44100).integratedLufs + 23)).toBeLessThan(0.1);
  });
  it('reads −3.01 LKFS for a 0 dBFS 997 Hz sine in one channel and −∞ for silence', () => {
    // Source: BS.1770-4 Annex 1 (a 0 dBFS 997 Hz sine in one front channel reads −3.01 LKFS; REFERENCES.md §8).
    expect(measure(segments([[0, 5]], { hz: 997, channels: 1 })).integratedLufs).toBeCloseTo(-3.01, 2);
    expect(measure([new Float64Array(FS * 2)]).integratedLufs).toBe(-Infinity);
  });
});

describe('loudness range: EBU Tech 3342 cases', () => {
  // Source: EBU Tech 3342 test signals 1–4 (20 s segments), expected LRA 10, 5, 20, 15 LU ±1 (REFERENCES.md §8).
  const cases: [string, number[], number][] = [
    ['1: −20/−30', [-20, -30], 10],
    ['2: −20/−15', [-20, -15], 5],
    ['3: −40/−20', [-40, -20], 20],
    ['4: −50/−35/−20/−35/−50', [-50, -35, -20, -35, -50], 15],
  ];
  for (const [name, levelsDb, lra] of cases) {
    it(`case ${name} → ${lra} LU`, () => {
      const r = measure(segments(levelsDb.map((l) => [l, 20] as [number, number])));
      expect(Math.abs(r.loudnessRangeLu - lra)).toBeLessThan(1);
    });
  }
});

function truePeakDb(x: Float64Array, block = 4096): { db: number; meter: TruePeakMeter } {
  const m = new TruePeakMeter();
  for (let i = 0; i < x.length; i += block) m.push(x.subarray(i, i + block));
  return { db: 20 * Math.log10(m.finish()), meter: m };
}

/**
 * A sine with 20 ms raised-cosine fades at both ends: an abrupt start is a step whose band-limited
 * reconstruction really does overshoot (Gibbs), which is not what these cases measure.
 */
function sine(n: number, cyclesPerSample: number, phaseDeg: number, amp: number): Float64Array {
  const fade = 960;
  return Float64Array.from({ length: n }, (_, i) => {
    const edge = Math.min(i, n - 1 - i);
    const g = edge >= fade ? 1 : 0.5 - 0.5 * Math.cos((Math.PI * edge) / fade);
    return g * amp * Math.sin(2 * Math.PI * cyclesPerSample * i + (phaseDeg * Math.PI) / 180);
  });
}

describe('true peak (BS.1770-4 Annex 2, 4× oversampling)', () => {
  // Source: EBU Tech 3341 true-peak cases 15–19 (REFERENCES.md §8): −6.0 dBTP for amplitude 0.5,
  // +3.0 dBTP for 1.41; Tech 3341 allows +0.2/−0.4 dB; our interpolator should be within ±0.05 dB.
  const cases: [string, number, number, number][] = [
    ['15: fs/4, 0°', 1 / 4, 0, 0.5],
    ['16: fs/4, 45°', 1 / 4, 45, 0.5],
    ['17: fs/6, 60°', 1 / 6, 60, 0.5],
    ['18: fs/8, 67.5°', 1 / 8, 67.5, 0.5],
    ['19: fs/4, 45°, 1.41', 1 / 4, 45, 1.41],
  ];
  for (const [name, f, ph, amp] of cases) {
    it(`case ${name}`, () => {
      const { db } = truePeakDb(sine(FS, f, ph, amp));
      const want = 20 * Math.log10(amp);
      expect(Math.abs(db - want)).toBeLessThan(0.05);
    });
  }

  it('never over-reads a band-limited signal and under-reads by at most 20·log10 cos(π/8)', () => {
    // Source: REFERENCES.md §8 [DERIVED]: worst-case under-read of 4× oversampling is −0.688 dB.
    // The true continuous peak of a sum of sines is found here by dense evaluation (×256).
    const rng = seededRng(7);
    for (let trial = 0; trial < 6; trial++) {
      const comps = Array.from({ length: 3 }, () => ({ f: 0.05 + 0.35 * rng(), p: 2 * Math.PI * rng(), a: 0.2 + 0.3 * rng() }));
      const n = 4096;
      const x = new Float64Array(n);
      for (let i = 0; i < n; i++) for (const c of comps) x[i]! += c.a * Math.sin(2 * Math.PI * c.f * i + c.p);
      let exact = 0;
      for (let t = 200; t < n - 200; t += 1 / 256) {
        let v = 0;
        for (const c of comps) v += c.a * Math.sin(2 * Math.PI * c.f * t + c.p);
        exact = Math.max(exact, Math.abs(v));
      }
      // Keep the comparison away from the ends, where the sines start abruptly.
      const inner = x.slice(0);
      for (let i = 0; i < 200; i++) inner[i] = inner[n - 1 - i] = 0;
      const { db } = truePeakDb(inner);
      const exactDb = 20 * Math.log10(exact);
      expect(db).toBeLessThan(exactDb + 0.02);
      expect(db).toBeGreaterThan(exactDb - 0.688);
    }
  });

  it('skipping quiet chunks gives exactly the brute-force answer', () => {
    // Source: exact identity — the skip bound Σ|h|·max|x| can never hide a larger value.
    const rng = seededRng(11), g = gaussian(rng);
    const n = 48000;
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) x[i] = 0.05 * g() * (i % 9000 < 300 ? 12 : 1);
    const phases = truePeakPhases();
    let brute = 0;
    for (let m = 0; m < n; m++) {
      brute = Math.max(brute, Math.abs(x[m]!));
      for (const h of phases) {
        let y = 0;
        for (let k = 0; k < h.length; k++) {
          const j = m - HALF_SPAN + 1 + k;
          if (j >= 0 && j < n) y += h[k]! * x[j]!;
        }
        brute = Math.max(brute, Math.abs(y));
      }
    }
    const { db, meter } = truePeakDb(x, 1000);
    expect(Math.abs(db - 20 * Math.log10(brute))).toBeLessThan(1e-9);
    expect(meter.interpolatedPoints).toBeLessThan(3 * n * 0.5);
  });
});
