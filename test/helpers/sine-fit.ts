/**
 * Four-parameter least-squares sine fit, IEEE Std 1057-2017 ("IEEE Standard for Digitizing
 * Waveform Recorders"), §8.1.3 / Annex: y ≈ A·cos ωt + B·sin ωt + C, with ω refined by
 * Gauss–Newton from a starting guess. Returns frequency (Hz) and amplitude √(A²+B²).
 */
export interface SineFit {
  frequencyHz: number;
  amplitude: number;
  offset: number;
  /** RMS of the residual. */
  residualRms: number;
}

function solve4(m: number[][], v: number[]): number[] {
  // Gaussian elimination with partial pivoting on a 4×4 system.
  const a = m.map((row, i) => [...row, v[i]!]);
  const n = 4;
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(a[r]![c]!) > Math.abs(a[p]![c]!)) p = r;
    [a[c], a[p]] = [a[p]!, a[c]!];
    for (let r = c + 1; r < n; r++) {
      const f = a[r]![c]! / a[c]![c]!;
      for (let k = c; k <= n; k++) a[r]![k]! -= f * a[c]![k]!;
    }
  }
  const x = new Array<number>(n).fill(0);
  for (let r = n - 1; r >= 0; r--) {
    let s = a[r]![n]!;
    for (let k = r + 1; k < n; k++) s -= a[r]![k]! * x[k]!;
    x[r] = s / a[r]![r]!;
  }
  return x;
}

export function fitSine(y: ArrayLike<number>, sampleRateHz: number, guessHz: number, from = 0, to = y.length): SineFit {
  let w = (2 * Math.PI * guessHz) / sampleRateHz;
  const n = to - from;
  const mid = (from + to - 1) / 2; // centred time improves conditioning
  let A = 0, B = 0, C = 0;
  // Three-parameter fit first (linear), then four-parameter iterations.
  for (let iter = 0; iter < 12; iter++) {
    const M = [[0, 0, 0, 0], [0, 0, 0, 0], [0, 0, 0, 0], [0, 0, 0, 0]];
    const v = [0, 0, 0, 0];
    for (let i = from; i < to; i++) {
      const t = i - mid;
      const c = Math.cos(w * t), s = Math.sin(w * t);
      const d = iter === 0 ? 0 : t * (-A * s + B * c);
      const row = [c, s, 1, d];
      const yi = y[i]!;
      for (let p = 0; p < 4; p++) {
        v[p]! += row[p]! * yi;
        for (let q = 0; q < 4; q++) M[p]![q]! += row[p]! * row[q]!;
      }
    }
    if (iter === 0) {
      M[3]![3] = 1; // no frequency update in the first (three-parameter) pass
      v[3] = 0;
    }
    const x = solve4(M, v);
    A = x[0]!;
    B = x[1]!;
    C = x[2]!;
    const dw = iter === 0 ? 0 : x[3]!;
    w += dw;
    if (iter > 2 && Math.abs(dw) < 1e-13) break;
  }
  let r2 = 0;
  for (let i = from; i < to; i++) {
    const t = i - mid;
    const e = y[i]! - (A * Math.cos(w * t) + B * Math.sin(w * t) + C);
    r2 += e * e;
  }
  return { frequencyHz: (w * sampleRateHz) / (2 * Math.PI), amplitude: Math.hypot(A, B), offset: C, residualRms: Math.sqrt(r2 / n) };
}
