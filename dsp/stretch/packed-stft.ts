/**
 * The time-stretcher's short-time transforms at arbitrary frame positions: analysis of the frame
 * centred at any input sample (the time map decides where), and synthesis with overlap-add at any
 * output sample. Two channels share one complex FFT (x₁ + j·x₂), split by conjugate symmetry:
 * X₀[k] = (Z[k] + Z*[N−k])/2, X₁[k] = (Z[k] − Z*[N−k])/(2j) (Oppenheim & Schafer, DTSP, §9.3,
 * "efficient computation of the DFT of two real sequences").
 *
 * dsp/core/stft.ts frames its input on a fixed hop; here the analysis hop changes from frame to
 * frame and frames are read from the stretcher's input ring, so only the FFT plan is shared.
 */
import { FftPlan } from '../core/fft.ts';
import type { InputRing, OverlapAddRing } from './rings.ts';

export class PackedStft {
  readonly fftSize: number;
  readonly channelCount: number;
  readonly #pairs: number;
  readonly #plan: FftPlan;
  readonly #window: Float64Array;
  readonly #olaWindow: Float64Array;
  readonly #olaWindowReal: Float64Array; // the same without the 1/N (the real inverse has it)
  readonly #useReal: boolean;
  readonly #z: Float64Array; // packed complex frame, 2N
  readonly #zt: Float64Array; // its transform, 2N
  /** Bins 0 … active − 1 are unpacked and synthesised; the rest are taken as 0. */
  readonly #active: number;

  /**
   * @param window analysis window (N samples)
   * @param olaWindow synthesis window, with the overlap-add normalisation and 1/N folded in
   */
  constructor(fftSize: number, channelCount: number, window: Float64Array, olaWindow: Float64Array, activeBins = fftSize / 2 + 1) {
    this.#plan = new FftPlan(fftSize); // rejects sizes that are not powers of two
    this.fftSize = fftSize;
    this.channelCount = channelCount;
    this.#pairs = Math.ceil(channelCount / 2);
    this.#window = window;
    this.#olaWindow = olaWindow;
    this.#olaWindowReal = olaWindow.map((w) => w * fftSize);
    this.#useReal = this.#plan.kernels === 'wasm-simd';
    this.#z = new Float64Array(2 * fftSize);
    this.#zt = new Float64Array(2 * fftSize);
    this.#active = Math.min(fftSize / 2 + 1, activeBins);
  }

  /**
   * Windowed spectra of the frame centred at input sample α, per channel (N/2+1 bins interleaved
   * into `spectra[c]`), and their power summed over channels into `power`.
   */
  analyze(input: InputRing, alpha: number, spectra: readonly Float64Array[], power: Float64Array): void {
    const n = this.fftSize, half = Math.min(n / 2, this.#active - 1), wrapN = n - 1;
    const start = alpha - n / 2;
    const z = this.#z, zt = this.#zt, w = this.#window;
    const mask = input.mask;
    const contiguous = input.contiguous(start, n);
    if (contiguous && this.#useReal) {
      // One real transform per channel (windowing and the split in the WebAssembly kernels).
      const base = start & mask;
      if (this.channelCount === 2) {
        // Both transforms first, then one pass for the power (the same sums as below).
        const x0 = spectra[0]!, x1 = spectra[1]!;
        this.#plan.realForwardWindowed(input.rings[0]!, base, w, x0);
        this.#plan.realForwardWindowed(input.rings[1]!, base, w, x1);
        for (let k = 0, j = 0; k <= half; k++, j += 2) {
          const ar = x0[j]!, ai = x0[j + 1]!, br = x1[j]!, bi = x1[j + 1]!;
          power[k] = ar * ar + ai * ai + (br * br + bi * bi);
        }
        return;
      }
      for (let c = 0; c < this.channelCount; c++) {
        const x = spectra[c]!;
        this.#plan.realForwardWindowed(input.rings[c]!, base, w, x);
        if (c === 0) for (let k = 0; k <= half; k++) power[k] = x[2 * k]! * x[2 * k]! + x[2 * k + 1]! * x[2 * k + 1]!;
        else for (let k = 0; k <= half; k++) power[k]! += x[2 * k]! * x[2 * k]! + x[2 * k + 1]! * x[2 * k + 1]!;
      }
      return;
    }
    for (let p = 0; p < this.#pairs; p++) {
      const c0 = 2 * p, c1 = 2 * p + 1;
      const hasSecond = c1 < this.channelCount;
      const r0 = input.rings[c0]!, r1 = hasSecond ? input.rings[c1]! : null;
      if (contiguous) {
        const base = start & mask;
        if (r1) {
          for (let i = 0; i < n; i++) {
            const g = w[i]!;
            z[2 * i] = r0[base + i]! * g;
            z[2 * i + 1] = r1[base + i]! * g;
          }
        } else {
          for (let i = 0; i < n; i++) {
            z[2 * i] = r0[base + i]! * w[i]!;
            z[2 * i + 1] = 0;
          }
        }
      } else {
        for (let i = 0; i < n; i++) {
          z[2 * i] = input.sample(c0, start + i) * w[i]!;
          z[2 * i + 1] = hasSecond ? input.sample(c1, start + i) * w[i]! : 0;
        }
      }
      this.#plan.forward(z, zt);
      const x0 = spectra[c0]!;
      if (hasSecond) {
        const x1 = spectra[c1]!;
        for (let k = 0; k <= half; k++) {
          const m = (n - k) & wrapN;
          const ar = zt[2 * k]!, ai = zt[2 * k + 1]!, br = zt[2 * m]!, bi = -zt[2 * m + 1]!;
          const pr = 0.5 * (ar + br), pi = 0.5 * (ai + bi);
          const qr = 0.5 * (ai - bi), qi = -0.5 * (ar - br);
          x0[2 * k] = pr;
          x0[2 * k + 1] = pi;
          x1[2 * k] = qr;
          x1[2 * k + 1] = qi;
          const pk = pr * pr + pi * pi + qr * qr + qi * qi;
          power[k] = p === 0 ? pk : power[k]! + pk;
        }
      } else {
        for (let k = 0; k <= half; k++) {
          const re = zt[2 * k]!, im = zt[2 * k + 1]!;
          x0[2 * k] = re;
          x0[2 * k + 1] = im;
          const pk = re * re + im * im;
          power[k] = p === 0 ? pk : power[k]! + pk;
        }
      }
    }
  }

  /**
   * Inverse transforms of `spectra` (real signals' half spectra, DC and Nyquist real), synthesis
   * window, overlap-add into `out` with the frame centred at output sample σ. Positions before
   * `out.emitted` (already handed out) are skipped.
   */
  synthesize(spectra: readonly Float64Array[], out: OverlapAddRing, sigma: number): void {
    const n = this.fftSize, half = n / 2;
    const z = this.#z, zt = this.#zt;
    const w = this.#olaWindow;
    const full = this.#active === half + 1, top = full ? half : this.#active;
    if (!full) z.fill(0);
    const start = sigma - half;
    const mask = out.mask;
    const first = Math.max(0, out.emitted - start);
    if (this.#useReal && first === 0 && full && (start & mask) + n <= mask + 1) {
      const base = start & mask;
      for (let c = 0; c < this.channelCount; c++) this.#plan.realInverseAdd(spectra[c]!, this.#olaWindowReal, out.rings[c]!, base);
      return;
    }
    for (let p = 0; p < this.#pairs; p++) {
      const c0 = 2 * p, c1 = 2 * p + 1;
      const hasSecond = c1 < this.channelCount;
      const y0 = spectra[c0]!;
      // Z = Y₀ + jY₁ over the whole circle (Z[N−k] = Y₀*[k] + jY₁*[k]), conjugated so that a
      // forward FFT gives the inverse: IDFT(Z) = conj(DFT(conj Z))/N (1/N is in the window).
      if (hasSecond) {
        const y1 = spectra[c1]!;
        z[0] = y0[0]!;
        z[1] = -y1[0]!;
        if (full) {
          z[n] = y0[n]!;
          z[n + 1] = -y1[n]!;
        }
        for (let k = 1; k < top; k++) {
          const ar = y0[2 * k]!, ai = y0[2 * k + 1]!, br = y1[2 * k]!, bi = y1[2 * k + 1]!;
          z[2 * k] = ar - bi;
          z[2 * k + 1] = -(ai + br);
          const m = 2 * (n - k);
          z[m] = ar + bi;
          z[m + 1] = ai - br;
        }
      } else {
        z[0] = y0[0]!;
        z[1] = 0;
        if (full) {
          z[n] = y0[n]!;
          z[n + 1] = 0;
        }
        for (let k = 1; k < top; k++) {
          const ar = y0[2 * k]!, ai = y0[2 * k + 1]!;
          z[2 * k] = ar;
          z[2 * k + 1] = -ai;
          const m = 2 * (n - k);
          z[m] = ar;
          z[m + 1] = ai;
        }
      }
      this.#plan.forward(z, zt);
      const o0 = out.rings[c0]!;
      const o1 = hasSecond ? out.rings[c1]! : null;
      let i = first;
      while (i < n) {
        const idx = (start + i) & mask;
        const len = Math.min(n - i, mask + 1 - idx);
        if (o1) {
          for (let j = 0; j < len; j++) {
            const g = w[i + j]!;
            o0[idx + j]! += zt[2 * (i + j)]! * g;
            o1[idx + j]! -= zt[2 * (i + j) + 1]! * g;
          }
        } else {
          for (let j = 0; j < len; j++) o0[idx + j]! += zt[2 * (i + j)]! * w[i + j]!;
        }
        i += len;
      }
    }
  }
}
