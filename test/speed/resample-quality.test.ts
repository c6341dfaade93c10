/**
 * Resampler quality, measured: sines swept across the band for several conversions, both
 * qualities; passband ripple and the worst spurious (alias or image) level are reported and checked
 * against the specification (archive: ±0.001 dB to 0.45 × the lower rate, ≥ 140 dB rejection;
 * draft: ≥ 90 dB). Then a comparison with scipy.signal.resample_poly on the same input.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { Resampler } from '../../dsp/core/resample.ts';
import type { ResampleQuality } from '../../dsp/core/resample-kernel.ts';

function resampleAll(x: Float64Array, ratio: number, quality: ResampleQuality, reuse?: Resampler): Float64Array {
  const r = reuse ?? new Resampler({ channelCount: 1, ratio, quality });
  r.reset();
  const parts = [r.process([x])[0]!, r.flush()[0]!];
  const y = new Float64Array(parts[0]!.length + parts[1]!.length);
  y.set(parts[0]!);
  y.set(parts[1]!, parts[0]!.length);
  return y;
}

/** Least-squares fit of a·cos + b·sin at `f` cycles/sample over y[from, to); returns amplitude and residual RMS. */
function fitSine(y: Float64Array, f: number, from: number, to: number): { amplitude: number; residualRms: number } {
  let scc = 0, sss = 0, scs = 0, syc = 0, sys = 0;
  for (let n = from; n < to; n++) {
    const c = Math.cos(2 * Math.PI * f * n), s = Math.sin(2 * Math.PI * f * n);
    scc += c * c; sss += s * s; scs += c * s; syc += y[n]! * c; sys += y[n]! * s;
  }
  const det = scc * sss - scs * scs;
  const a = (syc * sss - sys * scs) / det, b = (sys * scc - syc * scs) / det;
  let r = 0;
  for (let n = from; n < to; n++) {
    const e = y[n]! - a * Math.cos(2 * Math.PI * f * n) - b * Math.sin(2 * Math.PI * f * n);
    r += e * e;
  }
  return { amplitude: Math.hypot(a, b), residualRms: Math.sqrt(r / (to - from)) };
}

const CONVERSIONS: [string, number][] = [
  ['44.1→48 kHz (160/147)', 160 / 147],
  ['48→44.1 kHz (147/160)', 147 / 160],
  ['factor 1.0307', 1 / 1.0307],
  ['factor 0.5 (×2 longer)', 2],
  ['factor 2', 0.5],
  ['factor 4', 0.25],
  ['factor 1.35, 48→96 kHz', 2 / 1.35],
];

describe('resampler quality sweep', () => {
  const specs: Record<ResampleQuality, { rippleDb: number; rejectionDb: number }> = {
    archive: { rippleDb: 0.001, rejectionDb: 140 },
    draft: { rippleDb: 0.001, rejectionDb: 90 },
  };
  for (const quality of ['archive', 'draft'] as const) {
    it(`${quality}: passband ripple and worst alias/image level meet the specification`, () => {
      const n = 2400;
      const lines: string[] = [];
      let worstRipple = 0, worstSpur = -Infinity;
      for (const [label, ratio] of CONVERSIONS) {
        const lower = Math.min(1, ratio); // lower rate in cycles per input sample
        let ripple = 0, spur = -Infinity;
        const resampler = new Resampler({ channelCount: 1, ratio, quality });
        // 41 input frequencies from near 0 to just under the input Nyquist, plus both band edges.
        const freqs = Array.from({ length: 41 }, (_, i) => 0.004 + (i / 40) * 0.49).concat(lower < 1 ? [0.45 * lower, 0.5 * lower + 1e-4] : [0.45]);
        // (An input sine above 0.5 cycles/sample does not exist: upsampling has no stopband input.)
        for (const f of freqs) {
          const x = Float64Array.from({ length: n }, (_, k) => Math.sin(2 * Math.PI * f * k + 0.7));
          const y = resampleAll(x, ratio, quality, resampler);
          // Skip the ends, where the kernel (≈97 lower-rate samples each side) reaches the silence.
          const from = Math.ceil((110 * ratio) / lower), to = y.length - from;
          const fo = f / ratio; // cycles per output sample
          if (f <= 0.45 * lower) {
            // Passband: gain (dB) and everything that is not the wanted sine.
            const fit = fitSine(y, fo, from, to);
            ripple = Math.max(ripple, Math.abs(20 * Math.log10(fit.amplitude)));
            spur = Math.max(spur, 20 * Math.log10(fit.residualRms * Math.SQRT2));
          } else if (f >= 0.5 * lower) {
            // Stopband: all output is alias (the sine cannot be represented at the lower rate).
            let s = 0;
            for (let k = from; k < to; k++) s += y[k]! * y[k]!;
            spur = Math.max(spur, 20 * Math.log10(Math.sqrt(s / (to - from)) * Math.SQRT2));
          }
        }
        worstRipple = Math.max(worstRipple, ripple);
        worstSpur = Math.max(worstSpur, spur);
        lines.push(`${quality.padEnd(7)} ${label.padEnd(26)} ripple ±${ripple.toExponential(2)} dB  worst alias/image ${spur.toFixed(1)} dB`);
      }
      console.log(lines.join('\n'));
      expect(worstRipple).toBeLessThan(specs[quality].rippleDb);
      expect(worstSpur).toBeLessThan(-specs[quality].rejectionDb);
    });
  }
});

describe('agreement with scipy.signal.resample_poly', () => {
  // Fixture: test/fixtures/speed/make_resample_fixture.py (scipy resample_poly with a Kaiser FIR
  // designed to the same cutoff, β and length as ours). In the passband both filters are flat to
  // their ripple δ ≈ 10^(−140/20) = 1e-7, so for a sum of tones of total amplitude Σa ≈ 0.6 the
  // outputs may differ by at most about Σa·(δ₁ + δ₂) ≈ 1.2e-7; we allow 5e-7 (−126 dB re full scale).
  const fx = JSON.parse(readFileSync(new URL('../fixtures/speed/resample-poly.json', import.meta.url), 'utf8')) as {
    frames: number;
    cases: { up: number; down: number; frequencies: number[]; amplitudes: number[]; phases: number[]; output: string }[];
  };
  for (const c of fx.cases) {
    it(`up ${c.up} / down ${c.down}`, () => {
      const n = fx.frames;
      const x = new Float64Array(n);
      c.frequencies.forEach((f, i) => {
        for (let k = 0; k < n; k++) x[k]! += c.amplitudes[i]! * Math.sin(2 * Math.PI * f * k + c.phases[i]!);
      });
      const buf = Buffer.from(c.output, 'base64');
      const ref = new Float64Array(buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength));
      const ratio = c.up / c.down;
      const y = resampleAll(x, ratio, 'archive');
      // scipy returns ⌈N·up/down⌉ samples, as we do.
      expect(y.length).toBe(ref.length);
      const edge = Math.ceil(110 * Math.max(1, ratio)); // away from the ends (zero padding there)
      let worst = 0;
      for (let k = edge; k < y.length - edge; k++) worst = Math.max(worst, Math.abs(y[k]! - ref[k]!));
      console.log(`scipy ${c.up}/${c.down}: max |ours − scipy| = ${worst.toExponential(2)} (${(20 * Math.log10(worst)).toFixed(1)} dB re full scale)`);
      expect(worst).toBeLessThan(5e-7);
    });
  }
});
