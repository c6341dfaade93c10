/**
 * Sub-sample refinement of an echo by fitting the exact echo ripple in the cepstral domain.
 *
 * Model: the mean log power spectrum of y is B(ω) + log|H(ω)|², with B the source's own (smooth
 * on the quefrency scale of the echo) average log spectrum and H the echo factor:
 *   single reflection  H = 1 + g·e^{−jωτ}, log|H|² = log(1 + g² + 2g·cos ωτ);
 *   filtered reflection H = 1 + Σᵢ hᵢ·e^{−jω(o+i)}.
 * A delay τ is a linear phase, so the log spectrum ripples with period 1/τ and its cepstrum holds
 * a peak at τ (height g) with rahmonics at 2τ, 3τ (−g²/2, g³/3: the series of log(1 + z)). We fit
 * the model's exact N-point cepstrum (same sampling and mirroring as the data, so a fractional τ's
 * leakage is modelled, not approximated) to the data's cepstrum inside windows around τ, 2τ, 3τ,
 * with a constant + slope background per window for B, by Gauss–Newton with analytic derivatives
 * and Levenberg damping (Nocedal & Wright, Numerical Optimization, ch. 10).
 */
import type { FftPlan } from '../core/fft.ts';
import type { EchoKernel } from './kernel.ts';

export interface SingleEcho {
  /** Delay in samples (fractional). */
  delaySamples: number;
  /** Signed linear gain. */
  gain: number;
}

export interface FitWindow {
  lo: number;
  hi: number;
}

export interface FitResult extends SingleEcho {
  /** Residual sum of squares inside the windows after the background is removed. */
  rss: number;
  /** Points used (inside windows). */
  points: number;
  /** Standard errors from the Gauss–Newton curvature: s²(JᵀJ)⁻¹. */
  delayStdSamples: number;
  gainStd: number;
  windows: FitWindow[];
}

/** Windows of ±halfWidth around k·τ for the rahmonics that are large enough to matter. */
export function fitWindows(delay: number, gain: number, n: number, halfWidth = 8, extraSpan = 0): FitWindow[] {
  const out: FitWindow[] = [];
  for (let k = 1; k <= 3; k++) {
    if (k > 1 && Math.abs(gain) ** k / k < 0.01) break;
    const c = Math.round(k * delay);
    const lo = Math.max(2, c - halfWidth - (k === 1 ? extraSpan : 0));
    const hi = c + halfWidth + (k === 1 ? extraSpan : 0);
    if (hi >= n / 2 - 1) break;
    if (out.length && lo <= out[out.length - 1]!.hi) break; // rahmonic windows must not overlap
    out.push({ lo, hi });
  }
  return out;
}

/**
 * Projects out a constant + slope from each window of `v` (in place on the extracted vector).
 * The vector holds the windows' values concatenated in order.
 */
function projectBackground(v: Float64Array, windows: readonly FitWindow[]): void {
  let at = 0;
  for (const w of windows) {
    const m = w.hi - w.lo + 1;
    const mid = (m - 1) / 2;
    let s0 = 0, s1 = 0, s11 = 0;
    for (let i = 0; i < m; i++) {
      const t = i - mid;
      s0 += v[at + i]!;
      s1 += v[at + i]! * t;
      s11 += t * t;
    }
    const a = s0 / m, b = s11 > 0 ? s1 / s11 : 0;
    for (let i = 0; i < m; i++) v[at + i] = v[at + i]! - a - b * (i - mid);
    at += m;
  }
}

function extract(c: Float64Array, windows: readonly FitWindow[], out: Float64Array): void {
  let at = 0;
  for (const w of windows) for (let q = w.lo; q <= w.hi; q++) out[at++] = c[q]!;
}

const countPoints = (windows: readonly FitWindow[]) => windows.reduce((a, w) => a + w.hi - w.lo + 1, 0);

/**
 * Cepstrum of the single-echo factor at quefrency q, evaluated in closed form for the N-point
 * transform of the mirrored half spectrum (exactly what the data cepstrum is), so that its cost
 * does not depend on N. With log(1 + g² + 2g·cos θ) = Σ_{m≥1} a_m cos(mθ), a_m = 2(−1)^{m+1}g^m/m,
 * c(q) = Σ_m a_m·C(q, mτ), and
 *   C(q, t) = (1/N)·[1 + (−1)^q cos(πt) + S(α − β) + S(α + β)],  α = 2πt/N, β = 2πq/N,
 *   S(x) = Σ_{k=1}^{N/2−1} cos(kx) = sin((N/2 − ½)x)/(2 sin(x/2)) − ½  (= N/2 − 1 when x ≡ 0).
 */
export function echoCepstrumAt(q: number, delay: number, gain: number, n: number): number {
  const out = new Float64Array(1);
  echoCepstrumInto(Float64Array.of(q), delay, gain, n, out);
  return out[0]!;
}

/** echoCepstrumAt for many quefrencies at once (the series terms are shared). */
export function echoCepstrumInto(qs: ArrayLike<number>, delay: number, gain: number, n: number, out: Float64Array): void {
  const half = n / 2;
  const count = qs.length;
  out.fill(0, 0, count);
  let gm = 1;
  for (let m = 1; m < 5000; m++) {
    gm *= gain;
    const am = (2 * (m % 2 === 1 ? 1 : -1) * gm) / m;
    if (Math.abs(am) < 1e-9) break;
    const t = m * delay;
    const alpha = (2 * Math.PI * t) / n;
    const cpt = Math.cos(Math.PI * t);
    const scale = am / n;
    for (let i = 0; i < count; i++) {
      const q = qs[i]!;
      const beta = (2 * Math.PI * q) / n;
      const sgnQ = q % 2 === 0 ? 1 : -1;
      const x1 = alpha - beta, x2 = alpha + beta;
      const s1 = Math.sin(x1 / 2), s2 = Math.sin(x2 / 2);
      const d1 = Math.abs(s1) < 1e-12 ? half - 1 : Math.sin((half - 0.5) * x1) / (2 * s1) - 0.5;
      const d2 = Math.abs(s2) < 1e-12 ? half - 1 : Math.sin((half - 0.5) * x2) / (2 * s2) - 0.5;
      out[i] = out[i]! + scale * (1 + sgnQ * cpt + d1 + d2);
    }
  }
}

/**
 * Fits (τ, g) of a single reflection to a data cepstrum inside `windows`, by Gauss–Newton with
 * numeric derivatives and Levenberg damping. `searchSamples` > 0 first scans τ on a 0.1-sample
 * grid (gain re-solved at each point) so the descent starts in the right valley.
 */
export function fitSingleEcho(
  data: Float64Array,
  n: number,
  start: SingleEcho,
  options: { windows?: FitWindow[]; searchSamples?: number } = {},
): FitResult {
  const windows = options.windows ?? fitWindows(start.delaySamples, start.gain, n);
  const m = countPoints(windows);
  const d = new Float64Array(m);
  extract(data, windows, d);
  const qs: number[] = [];
  for (const w of windows) for (let q = w.lo; q <= w.hi; q++) qs.push(q);
  const clampG = (g: number) => Math.max(-0.99, Math.min(0.99, g));
  const qArr = Float64Array.from(qs);
  const model = (tau: number, g: number, into: Float64Array) => echoCepstrumInto(qArr, tau, g, n, into);
  const tmp = new Float64Array(m);
  const residual = (tau: number, g: number, into: Float64Array): number => {
    model(tau, g, tmp);
    for (let i = 0; i < m; i++) into[i] = d[i]! - tmp[i]!;
    projectBackground(into, windows);
    let s = 0;
    for (let i = 0; i < m; i++) s += into[i]! ** 2;
    return s;
  };
  const r = new Float64Array(m), rp = new Float64Array(m), rm = new Float64Array(m);
  const jt = new Float64Array(m), jg = new Float64Array(m);
  let tau = start.delaySamples, g = clampG(start.gain);
  const jacobian = () => {
    const ht = 1e-3, hg = 1e-4;
    residual(tau + ht, g, rp);
    residual(tau - ht, g, rm);
    for (let i = 0; i < m; i++) jt[i] = (rp[i]! - rm[i]!) / (2 * ht);
    const gp = clampG(g + hg), gm = clampG(g - hg);
    residual(tau, gp, rp);
    residual(tau, gm, rm);
    for (let i = 0; i < m; i++) jg[i] = (rp[i]! - rm[i]!) / (gp - gm);
  };
  const solveGainAt = (t: number, g0: number): [number, number] => {
    let gg = g0;
    for (let it = 0; it < 6; it++) {
      residual(t, gg, r);
      const hg = 1e-4;
      residual(t, clampG(gg + hg), rp);
      let num = 0, den = 0;
      for (let i = 0; i < m; i++) {
        const j = (rp[i]! - r[i]!) / hg;
        num -= j * r[i]!;
        den += j * j;
      }
      if (!(den > 0)) break;
      const step = num / den;
      gg = clampG(gg + Math.max(-0.3, Math.min(0.3, step)));
      if (Math.abs(step) < 1e-6) break;
    }
    return [residual(t, gg, r), gg];
  };

  if (options.searchSamples && options.searchSamples > 0) {
    let best = Infinity, bt = tau, bg = g;
    const lo = tau - options.searchSamples, hi = tau + options.searchSamples;
    for (let t = lo; t <= hi + 1e-9; t += 0.1) {
      if (t < 1) continue;
      const [c, gg] = solveGainAt(t, g);
      if (c < best) {
        best = c;
        bt = t;
        bg = gg;
      }
    }
    tau = bt;
    g = bg;
  }

  let cost = residual(tau, g, r);
  let lambda = 1e-3;
  let a11 = 0, a12 = 0, a22 = 0;
  for (let it = 0; it < 50; it++) {
    jacobian();
    let b1 = 0, b2 = 0;
    a11 = a12 = a22 = 0;
    for (let i = 0; i < m; i++) {
      a11 += jt[i]! * jt[i]!;
      a12 += jt[i]! * jg[i]!;
      a22 += jg[i]! * jg[i]!;
      b1 -= jt[i]! * r[i]!;
      b2 -= jg[i]! * r[i]!;
    }
    let improved = false;
    for (let tries = 0; tries < 14; tries++) {
      const d11 = a11 * (1 + lambda) + 1e-18, d22 = a22 * (1 + lambda) + 1e-18;
      const det = d11 * d22 - a12 * a12;
      if (!(Math.abs(det) > 0)) break;
      const st = (d22 * b1 - a12 * b2) / det;
      const sg = (d11 * b2 - a12 * b1) / det;
      const nt = tau + Math.max(-1, Math.min(1, st));
      const ng = clampG(g + Math.max(-0.3, Math.min(0.3, sg)));
      const c = residual(nt, ng, rp);
      if (c <= cost) {
        const small = Math.abs(nt - tau) < 1e-6 && Math.abs(ng - g) < 1e-7;
        tau = nt;
        g = ng;
        cost = residual(tau, g, r);
        lambda = Math.max(1e-12, lambda / 10);
        improved = !small;
        break;
      }
      lambda *= 10;
    }
    if (!improved) break;
  }
  const dof = Math.max(1, m - 2 - 2 * windows.length);
  const s2 = cost / dof;
  const det = a11 * a22 - a12 * a12;
  return {
    delaySamples: tau,
    gain: g,
    rss: cost,
    points: m,
    delayStdSamples: det > 0 ? Math.sqrt((s2 * a22) / det) : Infinity,
    gainStd: det > 0 ? Math.sqrt((s2 * a11) / det) : Infinity,
    windows,
  };
}

/**
 * Cepstrum of (mean log spectrum + log|1 + K(ω)|²): the data with a cancellation by kernel K
 * undone in the log domain, so a model of the whole echo can be fitted to it.
 */
/** log|1 + K(ω_k)|² at k = 0…N/2 for an echo kernel K on the plan's grid. */
export function echoFactorLogPower(kernel: EchoKernel, plan: FftPlan, into?: Float64Array): Float64Array {
  const n = plan.size;
  const s = scratchFor(plan);
  const buf = s.samples.fill(0);
  for (let i = 0; i < kernel.taps.length; i++) buf[kernel.offset + i] = kernel.taps[i]!;
  const spec = s.spectrum;
  plan.realForward(buf, spec);
  const out = into ?? new Float64Array(n / 2 + 1);
  for (let k = 0; k <= n / 2; k++) {
    const re = 1 + spec[2 * k]!, im = spec[2 * k + 1]!;
    out[k] = Math.log(re * re + im * im);
  }
  return out;
}

/**
 * Bins the programme never reaches (a +∞ gate, refine.ts deadBins) hold only a value filled in
 * from their neighbours; `estimate` gives them the exact ripple of the current estimate,
 * log(1 + g² + 2g·cos ωτ), instead of the cancelling kernel's response. The kernel is a 32-tap
 * windowed sinc whose response departs from the ideal near Nyquist (−28 dB at 0.9): on Festival
 * speech resampled to 44.1/48 kHz, where two thirds of the band is empty, that departure read as
 * a delay 0.008 sample shorter and a gain 1–4 % smaller on every pass, and the refinement drifted
 * with it. With the ideal ripple there the empty bins agree with whatever estimate is being
 * tested, and only the bins with programme move the fit.
 */
export interface DeadBinEstimate {
  gate: Float64Array;
  delaySamples: number;
  gain: number;
}

export function undoCancellationCepstrum(meanLog: Float64Array, kernel: EchoKernel | null, plan: FftPlan, into?: Float64Array, estimate?: DeadBinEstimate | null): Float64Array {
  const n = plan.size;
  const s = scratchFor(plan);
  // The log power goes into the kernel's own buffer, free once it is transformed, and the sum
  // straight into the spectrum array (no half-spectrum copy: the scratch is 2N + 2 numbers).
  const lp = kernel ? echoFactorLogPower(kernel, plan, s.samples.subarray(0, n / 2 + 1)) : null;
  const spec = s.spectrum;
  for (let k = 0; k <= n / 2; k++) {
    spec[2 * k] = lp ? meanLog[k]! + lp[k]! : meanLog[k]!;
    spec[2 * k + 1] = 0;
  }
  if (kernel && estimate) {
    const { gate, delaySamples: d, gain: g } = estimate;
    const w = (2 * Math.PI * d) / n;
    for (let k = 0; k <= n / 2; k++) {
      if (gate[k] === Infinity) spec[2 * k] = meanLog[k]! + Math.log(1 + g * g + 2 * g * Math.cos(w * k));
    }
  }
  const out = into ?? new Float64Array(n);
  plan.realInverse(spec, out, s.samples); // (samples is free again here)
  return out;
}

/**
 * Working arrays reused from call to call: the refinement runs these transforms at up to 2^21
 * points several times per pass, and fresh 16 MB arrays each time left hundreds of MB of garbage
 * waiting for the collector (peak memory only: the arithmetic is the same). One set, sized for
 * the largest transform seen, viewed at smaller sizes, until releaseFitScratch().
 * Shared by every caller in the thread: use it only in synchronous code (never across an await).
 */
export interface FitScratch {
  samples: Float64Array;
  spectrum: Float64Array;
}
let scratch: { n: number; buffer: Float64Array } | null = null;
export function scratchFor(plan: FftPlan): FitScratch {
  const n = plan.size;
  if (!scratch || scratch.n < n) scratch = { n, buffer: new Float64Array(2 * n + 2) };
  const b = scratch.buffer;
  return {
    samples: b.subarray(0, n),
    spectrum: b.subarray(n, 2 * n + 2),
  };
}

/** Lets the working arrays go (the end of an analysis); the next call makes new ones. */
export function releaseFitScratch(): void {
  scratch = null;
}
