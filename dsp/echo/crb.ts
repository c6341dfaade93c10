/**
 * Cramér–Rao bound for estimating a single echo (τ, g) from N samples of y = x + g·x(t − τ), with
 * x a stationary Gaussian process of known spectrum. The asymptotic (Whittle) Fisher information
 * for the parameters θ of a spectral density P(f; θ) is
 *   I_ij = (N/2) ∫_{−1/2}^{1/2} ∂ln P/∂θ_i · ∂ln P/∂θ_j df
 * (Kay, Fundamentals of Statistical Signal Processing: Estimation Theory, 1993, §3.11, after
 * Whittle 1953). With ln P = ln S_x(f) + ln(1 + g² + 2g·cos 2πfτ) the source spectrum drops out of
 * the derivatives, so the bound depends only on N, g, τ and the band [fLo, fHi] (cycles/sample)
 * over which x has power above any additive noise; for small g and the full band it tends to
 * var(τ̂) ≈ 3/(π²g²N) samples², i.e. the Knapp–Carter flat-spectrum delay bound
 * 3/(8π²TB³ρ²) (REFERENCES §5c) with ρ = g, T = N/fs and B = fs/2.
 */

export interface EchoCrb {
  /** Standard deviation bound for the delay, samples. */
  delayStdSamples: number;
  /** Standard deviation bound for the gain. */
  gainStd: number;
}

export function echoCramerRao(n: number, delaySamples: number, gain: number, band: readonly [number, number] = [0, 0.5], points = 200000): EchoCrb {
  let itt = 0, itg = 0, igg = 0;
  const [lo, hi] = band;
  const df = (hi - lo) / points;
  for (let i = 0; i < points; i++) {
    const f = lo + (i + 0.5) * df;
    const w = 2 * Math.PI * f;
    const den = 1 + gain * gain + 2 * gain * Math.cos(w * delaySamples);
    const dt = (-2 * gain * w * Math.sin(w * delaySamples)) / den;
    const dg = (2 * gain + 2 * Math.cos(w * delaySamples)) / den;
    itt += dt * dt * df;
    itg += dt * dg * df;
    igg += dg * dg * df;
  }
  // (N/2)·∫ over −1/2…1/2 = N·∫ over 0…1/2 for an even integrand.
  itt *= n;
  itg *= n;
  igg *= n;
  const det = itt * igg - itg * itg;
  return { delayStdSamples: Math.sqrt(igg / det), gainStd: Math.sqrt(itt / det) };
}
