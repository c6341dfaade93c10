import { describe, expect, it } from 'vitest';
import { AnySizeFft, FftPlan } from '../../dsp/core/fft.ts';
import { seededRng } from '../helpers/rng.ts';

/** Direct O(N²) DFT in float64, the reference definition X[k] = Σ x[n] e^{−j2πkn/N}. */
function directDft(re: Float64Array, im: Float64Array): [Float64Array, Float64Array] {
  const n = re.length;
  const outRe = new Float64Array(n), outIm = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let sr = 0, si = 0;
    for (let t = 0; t < n; t++) {
      const a = (-2 * Math.PI * ((k * t) % n)) / n;
      const c = Math.cos(a), s = Math.sin(a);
      sr += re[t]! * c - im[t]! * s;
      si += re[t]! * s + im[t]! * c;
    }
    outRe[k] = sr;
    outIm[k] = si;
  }
  return [outRe, outIm];
}

const maxAbs = (a: ArrayLike<number>) => {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]!));
  return m;
};

describe('FftPlan against the direct DFT', () => {
  // Source: the DFT definition (Oppenheim & Schafer, DTSP, ch. 8); float64 tolerance 1e-9 relative.
  for (const n of [8, 16, 64, 256, 1024, 4096]) {
    it(`complex and real transforms match the direct DFT, N=${n}`, () => {
      const rng = seededRng(628318 + n);
      const re = Float64Array.from({ length: n }, () => rng() - 0.5);
      const im = Float64Array.from({ length: n }, () => rng() - 0.5);
      const [dr, di] = directDft(re, im);
      const plan = new FftPlan(n);
      const inter = new Float64Array(2 * n);
      for (let i = 0; i < n; i++) {
        inter[2 * i] = re[i]!;
        inter[2 * i + 1] = im[i]!;
      }
      const out = plan.createComplex();
      plan.forward(inter, out);
      const scale = maxAbs(dr) + maxAbs(di);
      let err = 0;
      for (let k = 0; k < n; k++) err = Math.max(err, Math.abs(out[2 * k]! - dr[k]!), Math.abs(out[2 * k + 1]! - di[k]!));
      expect(err / scale).toBeLessThan(1e-9);

      const [rr, ri] = directDft(re, new Float64Array(n));
      const half = plan.createHalfSpectrum();
      plan.realForward(re, half);
      let errR = 0;
      for (let k = 0; k <= n / 2; k++) errR = Math.max(errR, Math.abs(half[2 * k]! - rr[k]!), Math.abs(half[2 * k + 1]! - ri[k]!));
      expect(errR / (maxAbs(rr) + maxAbs(ri))).toBeLessThan(1e-9);
    });
  }

  // Large sizes: the direct DFT is too slow at O(N²) for every bin, so check a spread of bins.
  for (const n of [16384, 65536]) {
    it(`real transform matches the direct DFT on sampled bins, N=${n}`, () => {
      const rng = seededRng(n);
      const x = Float64Array.from({ length: n }, () => rng() - 0.5);
      const plan = new FftPlan(n);
      const half = plan.createHalfSpectrum();
      plan.realForward(x, half);
      let scale = 0;
      for (let k = 0; k <= n / 2; k++) scale = Math.max(scale, Math.hypot(half[2 * k]!, half[2 * k + 1]!));
      for (const k of [0, 1, 7, 1000, n / 4 + 3, n / 2 - 1, n / 2]) {
        let sr = 0, si = 0;
        for (let t = 0; t < n; t++) {
          const a = (-2 * Math.PI * ((k * t) % n)) / n;
          sr += x[t]! * Math.cos(a);
          si += x[t]! * Math.sin(a);
        }
        expect(Math.abs(half[2 * k]! - sr) / scale).toBeLessThan(1e-9);
        expect(Math.abs(half[2 * k + 1]! - si) / scale).toBeLessThan(1e-9);
      }
    });
  }

  // Sizes above 2^17 points evaluate the twiddles of their later stages on the fly (no 16 MB
  // table); the same direct-DFT check on sampled bins, and the inverse with a caller's work array.
  for (const n of [1 << 19, 1 << 21]) {
    it(`real transform with on-the-fly twiddles matches the direct DFT on sampled bins, N=${n}`, () => {
      // Source: the DFT definition (as above); float64 tolerance 1e-9 relative.
      const rng = seededRng(n + 1);
      const x = Float64Array.from({ length: n }, () => rng() - 0.5);
      const plan = new FftPlan(n);
      const half = plan.createHalfSpectrum();
      plan.realForward(x, half);
      let scale = 0;
      for (let k = 0; k <= n / 2; k++) scale = Math.max(scale, Math.hypot(half[2 * k]!, half[2 * k + 1]!));
      for (const k of [1, 3, 12345, n / 4 + 3, n / 2 - 7]) {
        let sr = 0, si = 0;
        for (let t = 0; t < n; t++) {
          const a = (-2 * Math.PI * ((k * t) % n)) / n;
          sr += x[t]! * Math.cos(a);
          si += x[t]! * Math.sin(a);
        }
        expect(Math.abs(half[2 * k]! - sr) / scale).toBeLessThan(1e-9);
        expect(Math.abs(half[2 * k + 1]! - si) / scale).toBeLessThan(1e-9);
      }
      // Source: exact identity — inverse(forward(x)) = x; the work array changes nothing.
      const back = new Float64Array(n), back2 = new Float64Array(n);
      plan.realInverse(half, back);
      plan.realInverse(half, back2, new Float64Array(n));
      expect(maxAbs(back.map((v, i) => v - x[i]!))).toBeLessThan(1e-12);
      expect(back2).toEqual(back);
    }, 60_000);
  }

  it('real inverse undoes the real forward transform (1/N scaling)', () => {
    // Source: exact identity x = IDFT(DFT(x)).
    for (const n of [2, 4, 8, 1024, 65536]) {
      const rng = seededRng(n + 1);
      const x = Float64Array.from({ length: n }, () => rng() - 0.5);
      const plan = new FftPlan(n);
      const half = plan.createHalfSpectrum();
      plan.realForward(x, half);
      const y = new Float64Array(n);
      plan.realInverse(half, y);
      for (let i = 0; i < n; i++) expect(Math.abs(y[i]! - x[i]!)).toBeLessThan(1e-12);
    }
  });

  it('Bluestein transform of any size matches the direct DFT', () => {
    // Source: the DFT definition; Bluestein (1970) chirp-z identity nk = (n² + k² − (k−n)²)/2.
    for (const n of [1, 3, 5, 12, 100, 441, 1000]) {
      const rng = seededRng(n + 99);
      const re = Float64Array.from({ length: n }, () => rng() - 0.5);
      const im = Float64Array.from({ length: n }, () => rng() - 0.5);
      const [dr, di] = directDft(re, im);
      const inter = new Float64Array(2 * n);
      for (let i = 0; i < n; i++) {
        inter[2 * i] = re[i]!;
        inter[2 * i + 1] = im[i]!;
      }
      const f = new AnySizeFft(n);
      const out = new Float64Array(2 * n);
      f.forward(inter, out);
      const scale = maxAbs(dr) + maxAbs(di) || 1;
      for (let k = 0; k < n; k++) {
        expect(Math.abs(out[2 * k]! - dr[k]!) / scale).toBeLessThan(1e-9);
        expect(Math.abs(out[2 * k + 1]! - di[k]!) / scale).toBeLessThan(1e-9);
      }
      const back = new Float64Array(2 * n);
      f.inverse(out, back);
      for (let i = 0; i < 2 * n; i++) expect(Math.abs(back[i]! - inter[i]!)).toBeLessThan(1e-12);
    }
  });

  it('rejects sizes that are not powers of two', () => {
    expect(() => new FftPlan(1000)).toThrow(/fftSize=1000 must be a power of two/);
  });
});
