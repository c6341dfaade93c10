/**
 * Time-stretch (dsp/stretch/phase-vocoder.ts): frequency and level of steady tones, duration,
 * click positions and sharpness, STFT consistency, round-trip spectral distance, stereo coherence,
 * streaming invariance and parameter errors. Signals are short (1–3 s at 48 kHz) to keep the suite
 * fast; the measurements and their sources are named at each check.
 */
import { describe, expect, it } from 'vitest';
import { stretchArrays, TimeStretcher, type StretchFrame } from '../../dsp/stretch/phase-vocoder.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { fitSine } from '../helpers/sine-fit.ts';
import { clickTrain, pluckPhrase } from '../helpers/plucks.ts';
import { rosenbergVoice } from '../helpers/voice-like.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { logSpectralDistanceDb, spectralConvergenceDb, type CapturedFrame } from '../helpers/stft-measures.ts';

const FS = 48000;
/** Largest absolute difference (arrays of different length count as Infinity). */
const maxAbsDiff = (a: Float64Array, b: Float64Array): number => {
  if (a.length !== b.length) return Infinity;
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]! - b[i]!));
  return m;
};
const sine = (f: number, seconds: number, amplitude = 0.5, phase = 0.3) =>
  Float64Array.from({ length: Math.round(seconds * FS) }, (_, i) => amplitude * Math.sin((2 * Math.PI * f * i) / FS + phase));

/** Stretches channel 0 and records |Y| of every synthesis frame (for spectral convergence). */
function stretchCapturing(x: Float64Array, ratio: number): { y: Float64Array; frames: CapturedFrame[]; fftSize: number } {
  const frames: CapturedFrame[] = [];
  let fftSize = 0;
  const [y] = stretchArrays([x], {
    sampleRateHz: FS,
    ratio,
    onFrame: (f: StretchFrame) => {
      fftSize = f.fftSize;
      const s = f.spectra[0]!;
      const m = new Float64Array(f.fftSize / 2 + 1);
      for (let k = 0; k < m.length; k++) m[k] = Math.hypot(s[2 * k]!, s[2 * k + 1]!);
      frames.push({ center: f.outputCenter, magnitude: m });
    },
  });
  return { y: y!, frames, fftSize };
}

describe('time-stretch: identity', () => {
  it('ratio 1 returns the input to rounding error', () => {
    // Source: exact reconstruction of unmodified weighted overlap-add with Hann² at hop N/4
    // (Σw² = 1.5; J. O. Smith, Spectral Audio Signal Processing; REFERENCES §7 "Identity").
    const x = Float64Array.from(rosenbergVoice(FS, 1.5), (v, i) => v + 0.1 * Math.sin(i * 0.01));
    const [y] = stretchArrays([x], { sampleRateHz: FS, ratio: 1 });
    expect(y!.length).toBe(x.length);
    expect(maxAbsDiff(y!, x)).toBeLessThan(1e-12);
  });
});

describe('time-stretch: steady sines keep frequency and level', () => {
  // Source: a time-scale change leaves a steady tone's frequency and level unchanged
  // (REFERENCES §7; Laroche & Dolson 1999). Measured with the IEEE Std 1057 four-parameter sine
  // fit over the output without its first and last 8192 samples. Required: ±0.5 cent, ±0.2 dB.
  const rows: string[] = [];
  for (const ratio of [0.5, 0.8, 1.25, 2]) {
    for (const f of [110, 440, 3150]) {
      it(`${f} Hz, ratio ${ratio}`, () => {
        const x = sine(f, 1.5);
        const [y] = stretchArrays([x], { sampleRateHz: FS, ratio });
        const fit = fitSine(y!, FS, f, 8192, y!.length - 8192);
        const cents = 1200 * Math.log2(fit.frequencyHz / f);
        const db = 20 * Math.log10(fit.amplitude / 0.5);
        rows.push(`ratio ${ratio} ${f} Hz: ${cents.toExponential(2)} cents, ${db.toFixed(5)} dB`);
        expect(Math.abs(cents)).toBeLessThanOrEqual(0.5);
        expect(Math.abs(db)).toBeLessThanOrEqual(0.2);
      });
    }
  }
  it('prints the table', () => {
    console.log('[stretch] steady sines:\n  ' + rows.join('\n  '));
    expect(rows.length).toBe(12);
  });
});

describe('time-stretch: duration', () => {
  it('is round(R·N) samples, within 1 ms of R·N/fs, for every ratio and block size', () => {
    // Source: definition of the ratio (duration × R); 1 ms = 48 samples at 48 kHz.
    const x = sine(330, 1.234567);
    for (const ratio of [0.25, 0.5, 0.8, 1.25, 2, 4, 1.37]) {
      for (const block of [x.length, 1000, 4097]) {
        const ts = new TimeStretcher({ sampleRateHz: FS, channelCount: 1, ratio });
        let len = 0;
        for (let at = 0; at < x.length; at += block) len += ts.push([x.subarray(at, Math.min(x.length, at + block))])[0]!.length;
        len += ts.flush()[0]!.length;
        expect(Math.abs(len / FS - (ratio * x.length) / FS)).toBeLessThan(0.001);
        expect(len).toBe(Math.round(ratio * x.length));
      }
    }
  });

  it('gives the same samples whatever the block size (streaming)', () => {
    // Source: exact identity — the frame schedule depends only on the input, not on how it arrives.
    const x = Float64Array.from(pluckPhrase(FS, 1.5), (v, i) => v + 0.05 * Math.sin(i * 0.03));
    const whole = stretchArrays([x], { sampleRateHz: FS, ratio: 1.3 })[0]!;
    const ts = new TimeStretcher({ sampleRateHz: FS, channelCount: 1, ratio: 1.3 });
    const parts: Float64Array[] = [];
    for (let at = 0; at < x.length; at += 777) parts.push(ts.push([x.subarray(at, Math.min(x.length, at + 777))])[0]!);
    parts.push(ts.flush()[0]!);
    const joined = new Float64Array(parts.reduce((s, p) => s + p.length, 0));
    let at = 0;
    for (const p of parts) {
      joined.set(p, at);
      at += p.length;
    }
    expect(maxAbsDiff(joined, whole)).toBe(0);
  });

  it('handles empty and very short inputs', () => {
    // Source: definition (round(R·N) samples, 0 for an empty input).
    expect(stretchArrays([new Float64Array(0)], { sampleRateHz: FS, ratio: 2 })[0]!.length).toBe(0);
    expect(stretchArrays([new Float64Array(5).fill(0.1)], { sampleRateHz: FS, ratio: 2 })[0]!.length).toBe(10);
  });
});

describe('time-stretch: sample rates', () => {
  it('keeps a 1 kHz tone and the duration at 8, 44.1 and 96 kHz, and clicks sharp at 96 kHz', () => {
    // Source: as above (REFERENCES §7); the FFT size follows the rate (≈ 85 ms) and the onset
    // detector runs on a mix decimated to ≤ 24 kHz.
    for (const fs of [8000, 44100, 96000]) {
      const x = Float64Array.from({ length: Math.round(1.2 * fs) }, (_, i) => 0.5 * Math.sin((2 * Math.PI * 1000 * i) / fs));
      const [y] = stretchArrays([x], { sampleRateHz: fs, ratio: 1.5 });
      expect(y!.length).toBe(Math.round(1.5 * x.length));
      const skip = Math.round(0.2 * fs);
      const fit = fitSine(y!, fs, 1000, skip, y!.length - skip);
      expect(Math.abs(1200 * Math.log2(fit.frequencyHz / 1000))).toBeLessThan(0.5);
      expect(Math.abs(20 * Math.log10(fit.amplitude / 0.5))).toBeLessThan(0.2);
    }
    const fs = 96000;
    const signal = new Float64Array(fs);
    const clicks = [0.2, 0.45, 0.7].map((t) => Math.round(t * fs));
    for (const c of clicks) signal[c] = 0.8;
    const [y] = stretchArrays([signal], { sampleRateHz: fs, ratio: 1.5 });
    for (const c of clicks) {
      let peakAt = 0, peak = 0;
      for (let i = Math.round(1.5 * c - 0.05 * fs); i < 1.5 * c + 0.05 * fs; i++) if (y![i]! ** 2 > peak) [peak, peakAt] = [y![i]! ** 2, i];
      expect(Math.abs(peakAt - 1.5 * c) / fs).toBeLessThan(0.002);
    }
  });
});

describe('time-stretch: transients', () => {
  it('a click train stretched by 1.5 keeps every click within ±2 ms and ≥ 80 % of its energy in 5 ms', () => {
    // Source: required by the issue; expected position R·t for a click at t (definition of the ratio).
    const { signal, clicks } = clickTrain(FS, 3, 0.15, 0.25);
    const ratio = 1.5;
    const [y] = stretchArrays([signal], { sampleRateHz: FS, ratio });
    const half = Math.round(0.0025 * FS);
    const lines: string[] = [];
    for (const c of clicks) {
      const expected = ratio * c;
      // Look ±100 ms around the expected position for the click's peak and its energy.
      const lo = Math.round(expected - 0.1 * FS), hi = Math.round(expected + 0.1 * FS);
      let total = 0, peakAt = lo, peak = 0;
      for (let i = lo; i < hi; i++) {
        const e = y![i]! ** 2;
        total += e;
        if (e > peak) {
          peak = e;
          peakAt = i;
        }
      }
      let inside = 0;
      for (let i = peakAt - half; i <= peakAt + half; i++) inside += y![i]! ** 2;
      const offsetMs = ((peakAt - expected) / FS) * 1000;
      lines.push(`${((c / FS) * 1000).toFixed(0)} ms → ${offsetMs.toFixed(3)} ms, ${((100 * inside) / total).toFixed(1)} %`);
      expect(Math.abs(offsetMs)).toBeLessThanOrEqual(2);
      expect(inside / total).toBeGreaterThanOrEqual(0.8);
    }
    console.log('[stretch] click train ×1.5 (input time → offset from R·t, energy in 5 ms):\n  ' + lines.join('\n  '));
  });

  it('detects each click exactly and no onset in steady tones', () => {
    // Source: construction — clicks are single samples; a steady tone has no onset after its start.
    const { signal, clicks } = clickTrain(FS, 2, 0.15, 0.3);
    const found: number[] = [];
    stretchArrays([signal], { sampleRateHz: FS, ratio: 1.2, onOnset: (t) => found.push(t) });
    expect(found).toEqual(clicks);
    const chord = Float64Array.from({ length: 2 * FS }, (_, i) => 0.2 * (Math.sin(0.0342 * i) + Math.sin(0.0431 * i) + Math.sin(0.0513 * i)));
    const none: number[] = [];
    stretchArrays([chord], { sampleRateHz: FS, ratio: 1.2, onOnset: (t) => none.push(t) });
    expect(none).toEqual([]);
  });
});

describe('time-stretch: STFT consistency and round trip', () => {
  const g = gaussian(seededRng(5));
  const signals: [string, () => Float64Array, number][] = [
    // name, generator, bound on spectral convergence (dB) for every ratio
    ['sine 440 Hz', () => sine(440, 2), -30],
    ['C major triad', () => Float64Array.from({ length: 2 * FS }, (_, i) => 0.2 * (Math.sin((2 * Math.PI * 261.63 * i) / FS) + Math.sin((2 * Math.PI * 329.63 * i) / FS) + Math.sin((2 * Math.PI * 392 * i) / FS))), -30],
    ['click train', () => clickTrain(FS, 2, 0.15, 0.25).signal, -60],
    ['plucks', () => pluckPhrase(FS, 2.5), -12],
    ['voice-like', () => rosenbergVoice(FS, 2.5), -8],
    ['white noise', () => Float64Array.from({ length: 2 * FS }, () => 0.1 * g()), -6],
  ];
  it('spectral convergence of the output is below the bound for every test signal', () => {
    // Source: Griffin & Lim (1984) distance, normalised magnitude form (Sturmel & Daudet 2011);
    // bounds are this implementation's measured values with ≥ 2 dB margin (documented in the report).
    const lines: string[] = [];
    for (const [name, make, bound] of signals) {
      const x = make();
      const cells: string[] = [];
      for (const ratio of [0.5, 0.8, 1.25, 2]) {
        const { y, frames, fftSize } = stretchCapturing(x, ratio);
        const sc = spectralConvergenceDb(y, frames, fftSize);
        cells.push(`${ratio}: ${sc.toFixed(1)}`);
        expect(sc).toBeLessThan(bound);
      }
      lines.push(`${name.padEnd(14)} ${cells.join('  ')} dB (bound ${bound})`);
    }
    console.log('[stretch] spectral convergence by ratio:\n  ' + lines.join('\n  '));
  });

  it('stretch by R then 1/R returns voice-like material within the log-spectral-distance bound', () => {
    // Source: log-spectral distance (Rabiner & Juang 1993); bound 1.5 dB for 0.8…2 and 3 dB for
    // 0.5 (this implementation measures 0.3–0.7 dB and 2.1 dB). A 1-sample shift of the input
    // scores ≈ 0, a 20 ms shift ≈ 8 dB: the measure is sensitive to misplacement.
    const x = rosenbergVoice(FS, 3);
    const lines: string[] = [];
    for (const [ratio, bound] of [[0.8, 1.5], [1.25, 1.5], [2, 1.5], [0.5, 3]] as const) {
      const [y] = stretchArrays([x], { sampleRateHz: FS, ratio });
      const [z] = stretchArrays([y!], { sampleRateHz: FS, ratio: 1 / ratio });
      const lsd = logSpectralDistanceDb(x, z!, 2048);
      lines.push(`R=${ratio}: ${lsd.toFixed(2)} dB`);
      expect(lsd).toBeLessThan(bound);
    }
    const shifted = new Float64Array(x.length);
    shifted.set(x.subarray(0, x.length - 960), 960);
    const control = logSpectralDistanceDb(x, shifted, 2048);
    lines.push(`control, input shifted 20 ms: ${control.toFixed(2)} dB`);
    expect(control).toBeGreaterThan(3);
    console.log('[stretch] round trip log-spectral distance:\n  ' + lines.join('\n  '));
  });
});

describe('time-stretch: channels', () => {
  it('keeps the stereo image: a delayed, inverted, halved copy stays exactly that', () => {
    // Source: exact identity — one rotation per bin for all channels, so Y₂ = g·e^{−jωd}·Y₁ up to
    // the window's tolerance of the 0.5 ms delay; cross-correlation lag and level ratio measured.
    const v = rosenbergVoice(FS, 2);
    const d = 24;
    const right = Float64Array.from(v, (_, i) => (i >= d ? -0.5 * v[i - d]! : 0));
    for (const ratio of [0.8, 1.25, 2]) {
      const [a, b] = stretchArrays([v, right], { sampleRateHz: FS, ratio });
      let best = -Infinity, lag = -1;
      for (let l = 0; l < 60; l++) {
        let s = 0;
        for (let i = l; i < a!.length; i++) s -= a![i - l]! * b![i]!;
        if (s > best) {
          best = s;
          lag = l;
        }
      }
      let ea = 0, eb = 0;
      for (let i = 0; i < a!.length; i++) {
        ea += a![i]! ** 2;
        eb += b![i]! ** 2;
      }
      expect(lag).toBe(d);
      expect(Math.abs(10 * Math.log10(eb / ea) - 20 * Math.log10(0.5))).toBeLessThan(0.05);
    }
  });

  it('an identical channel pair stays identical, and three channels work', () => {
    // Source: exact identity (same input, same rotation).
    const v = pluckPhrase(FS, 1.2);
    const [a, b, c] = stretchArrays([v, v, v], { sampleRateHz: FS, ratio: 1.5 });
    expect(maxAbsDiff(b!, a!)).toBeLessThan(1e-12);
    expect(maxAbsDiff(c!, a!)).toBeLessThan(1e-12);
  });
});

describe('time-stretch: parameters', () => {
  it('rejects ratios outside 0.25…4 with a clear message', () => {
    // Source: the range.
    for (const ratio of [0.2, 4.5, 0, -1, NaN]) {
      expect(() => new TimeStretcher({ sampleRateHz: FS, channelCount: 1, ratio })).toThrow(ParameterError);
    }
    expect(() => new TimeStretcher({ sampleRateHz: FS, channelCount: 1, ratio: 5 })).toThrow(/ratio 5 is outside 0.25 … 4/);
  });
});
