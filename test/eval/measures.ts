/**
 * Measures of a correction against a known reference, for the corrections section of
 * `npm run eval`. They use fft.js (an independent FFT library) and plain loops, not the project's
 * own DSP, so a fault in the product's FFT cannot hide itself.
 *
 * - Echo reduction: energy of (output − reference) over energy of (input − reference), in dB
 *   (common practice: the residual of the fault before and after the correction).
 * - Band deviation: per third-octave band (IEC 61260 nominal centres, common practice), the level
 *   of the output minus that of the reference, over bands that carry programme.
 * - Residual speed: the time offset between output and reference measured by cross-correlation
 *   in 1 s windows every 0.25 s (the band-limited correlation maximised between samples); its
 *   slope is the speed error.
 */
import FFT from 'fft.js';

/** Mean of the channels. */
export function monoMix(chans: readonly Float64Array[]): Float64Array {
  const n = Math.min(...chans.map((c) => c.length));
  const out = new Float64Array(n);
  for (const c of chans) for (let i = 0; i < n; i++) out[i]! += c[i]! / chans.length;
  return out;
}

export function echoReductionDb(input: Float64Array, output: Float64Array, reference: Float64Array): number {
  const n = Math.min(input.length, output.length, reference.length);
  let before = 0;
  let after = 0;
  for (let i = 0; i < n; i++) {
    before += (input[i]! - reference[i]!) ** 2;
    after += (output[i]! - reference[i]!) ** 2;
  }
  return 10 * Math.log10(after / before);
}

const plans = new Map<number, FFT>();
const planOf = (n: number) => {
  let p = plans.get(n);
  if (!p) plans.set(n, (p = new FFT(n)));
  return p;
};

/** Power spectrum averaged over Hann frames of `size` with half overlap (Welch, common practice). */
export function powerSpectrum(x: Float64Array, size = 8192): Float64Array {
  const fft = planOf(size);
  const w = new Float64Array(size);
  for (let i = 0; i < size; i++) w[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / size);
  const buf = new Array<number>(size).fill(0);
  const out = fft.createComplexArray() as number[];
  const p = new Float64Array(size / 2 + 1);
  let frames = 0;
  for (let s = 0; s + size <= x.length; s += size / 2) {
    for (let i = 0; i < size; i++) buf[i] = x[s + i]! * w[i]!;
    fft.realTransform(out, buf);
    for (let k = 0; k <= size / 2; k++) p[k]! += out[2 * k]! ** 2 + out[2 * k + 1]! ** 2;
    frames++;
  }
  if (frames) for (let k = 0; k < p.length; k++) p[k]! /= frames;
  return p;
}

/** Third-octave levels (dB) between loHz and hiHz. */
export function thirdOctaveDb(p: Float64Array, rateHz: number, loHz = 50, hiHz = 16000): { centreHz: number; db: number }[] {
  const size = (p.length - 1) * 2;
  const out: { centreHz: number; db: number }[] = [];
  for (let b = -20; b <= 13; b++) {
    const fc = 1000 * 2 ** (b / 3);
    if (fc < loHz || fc > hiHz || fc * 2 ** (1 / 6) >= rateHz / 2) continue;
    const k0 = Math.max(1, Math.ceil((fc * 2 ** (-1 / 6) * size) / rateHz));
    const k1 = Math.floor((fc * 2 ** (1 / 6) * size) / rateHz);
    if (k1 < k0) continue;
    let e = 0;
    for (let k = k0; k <= k1; k++) e += p[k]!;
    out.push({ centreHz: fc, db: 10 * Math.log10(e + 1e-300) });
  }
  return out;
}

/** Largest |output − reference| band level over bands within `rangeDb` of the loudest reference band. */
export function bandDeviationDb(output: Float64Array, reference: Float64Array, rateHz: number, rangeDb = 50, hiHz = 16000): number {
  const a = thirdOctaveDb(powerSpectrum(output), rateHz, 50, hiHz);
  const r = thirdOctaveDb(powerSpectrum(reference), rateHz, 50, hiHz);
  const top = Math.max(...r.map((b) => b.db));
  let worst = 0;
  for (let i = 0; i < r.length; i++) if (r[i]!.db > top - rangeDb) worst = Math.max(worst, Math.abs(a[i]!.db - r[i]!.db));
  return worst;
}

/**
 * Time offset of `output` against `reference` (seconds, positive when the output lags) at window
 * centres every `hopSeconds`, where the reference window carries programme.
 */
export function offsetTrack(output: Float64Array, reference: Float64Array, rateHz: number, windowSeconds = 1, hopSeconds = 0.25, maxLagSeconds = 0.02) {
  const win = Math.round(windowSeconds * rateHz);
  let size = 1;
  while (size < 2 * win) size *= 2;
  const fft = planOf(size);
  const maxLag = Math.round(maxLagSeconds * rateHz);
  const hann = new Float64Array(win);
  for (let i = 0; i < win; i++) hann[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / win);
  const a = new Array<number>(size).fill(0);
  const b = new Array<number>(size).fill(0);
  const A = fft.createComplexArray() as number[];
  const B = fft.createComplexArray() as number[];
  const C = fft.createComplexArray() as number[];
  const c = fft.createComplexArray() as number[];
  let level = 0;
  for (let i = 0; i < reference.length; i++) level += reference[i]! ** 2;
  level /= Math.max(1, reference.length);
  const times: number[] = [];
  const offsets: number[] = [];
  const n = Math.min(output.length, reference.length);
  for (let s = 0; s + win <= n; s += Math.round(hopSeconds * rateHz)) {
    let e = 0;
    for (let i = 0; i < win; i++) e += reference[s + i]! ** 2;
    if (e / win < level * 1e-3) continue; // 30 dB under the clip's mean: no programme to align on
    for (let i = 0; i < win; i++) {
      a[i] = output[s + i]! * hann[i]!;
      b[i] = reference[s + i]! * hann[i]!;
    }
    fft.realTransform(A, a);
    fft.completeSpectrum(A);
    fft.realTransform(B, b);
    fft.completeSpectrum(B);
    for (let k = 0; k < size; k++) {
      const ar = A[2 * k]!, ai = A[2 * k + 1]!, br = B[2 * k]!, bi = B[2 * k + 1]!;
      C[2 * k] = ar * br + ai * bi;
      C[2 * k + 1] = ai * br - ar * bi;
    }
    fft.inverseTransform(c, C);
    let best = 0;
    let bestV = -Infinity;
    for (let l = -maxLag; l <= maxLag; l++) {
      const v = c[2 * ((l + size) % size)]!;
      if (v > bestV) {
        bestV = v;
        best = l;
      }
    }
    // The band-limited cross-correlation between integer lags, r(l) = Σ C_k cos(2πkl/N − ∠C_k)…,
    // evaluated exactly and maximised by golden-section search around the integer peak.
    const at = (l: number) => {
      let v = 0;
      for (let k = 0; k <= size / 2; k++) {
        const w = k === 0 || k === size / 2 ? 1 : 2;
        const ang = (2 * Math.PI * k * l) / size;
        v += w * (C[2 * k]! * Math.cos(ang) - C[2 * k + 1]! * Math.sin(ang));
      }
      return v;
    };
    let lo = best - 1, hi = best + 1;
    const g = (Math.sqrt(5) - 1) / 2;
    let x1 = hi - g * (hi - lo), x2 = lo + g * (hi - lo);
    let f1 = at(x1), f2 = at(x2);
    for (let it = 0; it < 40 && hi - lo > 1e-5; it++) {
      if (f1 > f2) { hi = x2; x2 = x1; f2 = f1; x1 = hi - g * (hi - lo); f1 = at(x1); }
      else { lo = x1; x1 = x2; f1 = f2; x2 = lo + g * (hi - lo); f2 = at(x2); }
    }
    times.push((s + win / 2) / rateHz);
    offsets.push((lo + hi) / 2 / rateHz);
  }
  return { times, offsets };
}

/**
 * Residual speed error (%) along the file: the slope of the offset track over ±`spanSeconds`
 * (least squares), positive when the output runs slow (its offset grows).
 */
export function residualSpeedPercent(track: { times: number[]; offsets: number[] }, spanSeconds = 1): { times: number[]; percent: number[] } {
  const { times, offsets } = track;
  const outT: number[] = [];
  const outP: number[] = [];
  for (let i = 0; i < times.length; i++) {
    let sx = 0, sy = 0, sxx = 0, sxy = 0, m = 0;
    for (let j = 0; j < times.length; j++) {
      if (Math.abs(times[j]! - times[i]!) > spanSeconds) continue;
      sx += times[j]!;
      sy += offsets[j]!;
      sxx += times[j]! ** 2;
      sxy += times[j]! * offsets[j]!;
      m++;
    }
    if (m < 3) continue;
    const slope = (m * sxy - sx * sy) / (m * sxx - sx * sx);
    outT.push(times[i]!);
    outP.push(100 * slope);
  }
  return { times: outT, percent: outP };
}
