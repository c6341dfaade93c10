/**
 * Analytic signal x + j·H{x} by the frequency-domain method (the same definition as
 * scipy.signal.hilbert): X[k] is kept at k = 0 (and N/2 for even N), doubled for 0 < k < N/2,
 * and zeroed for negative frequencies. Marple (1999), "Computing the discrete-time analytic
 * signal via FFT", IEEE Trans. Signal Process. 47(9):2600–2603.
 */
import { AnySizeFft } from './fft.ts';

export interface ComplexSignal {
  re: Float64Array;
  im: Float64Array;
}

export function analyticSignal(x: Float64Array): ComplexSignal {
  const n = x.length;
  if (n === 0) return { re: new Float64Array(0), im: new Float64Array(0) };
  const f = new AnySizeFft(n);
  const buf = new Float64Array(2 * n);
  for (let i = 0; i < n; i++) buf[2 * i] = x[i]!;
  const spec = new Float64Array(2 * n);
  f.forward(buf, spec);
  const half = Math.floor(n / 2);
  for (let k = 1; k < n; k++) {
    let g: number;
    if (n % 2 === 0) g = k < half ? 2 : k === half ? 1 : 0;
    else g = k <= half ? 2 : 0;
    spec[2 * k]! *= g;
    spec[2 * k + 1]! *= g;
  }
  f.inverse(spec, buf);
  const re = new Float64Array(n), im = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    re[i] = buf[2 * i]!;
    im[i] = buf[2 * i + 1]!;
  }
  return { re, im };
}

/** Instantaneous amplitude |x + jH{x}|. */
export function envelope(x: Float64Array): Float64Array {
  const { re, im } = analyticSignal(x);
  return re.map((r, i) => Math.hypot(r, im[i]!));
}
