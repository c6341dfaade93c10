/**
 * Exact band-limited delays for building test material, independent of the fractional-delay
 * filters under test. Method: the DFT time-shift theorem, x(n − d) ↔ e^{−j2πkd/N}·X[k]
 * (Oppenheim & Schafer, DTSP, DFT properties), applied to a zero-padded copy so the circular
 * shift does not wrap signal into the output. The Nyquist bin keeps only its real part
 * (cos(πd)) so the result stays real.
 */
import { nextPowerOfTwo, sharedPlan } from '../../dsp/core/fft.ts';

/** x delayed by `delaySamples` (any real value, negative = advanced), same length, zeros shifted in. */
export function delayExact(x: Float64Array, delaySamples: number, lowpass: { cutoffHz: number; sampleRateHz: number } | null = null): Float64Array {
  const n = x.length;
  const size = nextPowerOfTwo(n + Math.ceil(Math.abs(delaySamples)) + 4096);
  const plan = sharedPlan(size);
  const padded = new Float64Array(size);
  // Put the signal in the middle of the padding when advancing, so nothing wraps either way.
  const lead = delaySamples < 0 ? Math.ceil(-delaySamples) + 2048 : 0;
  padded.set(x, lead);
  const spec = plan.createHalfSpectrum();
  plan.realForward(padded, spec);
  for (let k = 0; k <= size / 2; k++) {
    const ang = (-2 * Math.PI * k * delaySamples) / size;
    // Optional zero-phase low-pass: the magnitude of a 2nd-order Butterworth run forwards and
    // backwards, |H|² = 1/(1 + (f/fc)⁴) (Butterworth's maximally flat response, analog prototype).
    const w = lowpass ? 1 / (1 + Math.pow((k * lowpass.sampleRateHz) / size / lowpass.cutoffHz, 4)) : 1;
    const c = w * Math.cos(ang), s = w * Math.sin(ang);
    const re = spec[2 * k]!, im = spec[2 * k + 1]!;
    if (k === size / 2) {
      spec[2 * k] = re * c;
      spec[2 * k + 1] = 0;
    } else {
      spec[2 * k] = re * c - im * s;
      spec[2 * k + 1] = re * s + im * c;
    }
  }
  const out = new Float64Array(size);
  plan.realInverse(spec, out);
  return out.slice(lead, lead + n);
}

/**
 * y = x + Σ gᵢ·x(n − dᵢ): the contract's echo model with any number of echoes (d < 0: pre-echo);
 * an echo with `lowpass` is low-passed first (a tape's print-through has its highs reduced).
 */
export function addEchoes(
  x: Float64Array,
  echoes: ReadonlyArray<{ delaySamples: number; gain: number; lowpass?: { cutoffHz: number; sampleRateHz: number } }>,
): Float64Array {
  const y = Float64Array.from(x);
  for (const e of echoes) {
    const d = delayExact(x, e.delaySamples, e.lowpass ?? null);
    for (let i = 0; i < y.length; i++) y[i]! += e.gain * d[i]!;
  }
  return y;
}
