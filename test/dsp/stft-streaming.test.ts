/**
 * The streaming STFT classes against a direct, non-streaming evaluation of their documented
 * definition (frame k covers padded samples [kH, kH + N) of the input preceded by N − H zeros;
 * synthesis adds w_s·IDFT(frame) at kH and divides by the periodic WOLA sum), on both FFT kernels,
 * for hops that do and do not divide the frame, fed in awkward block sizes so the history and
 * overlap-add buffers wrap at every possible phase.
 */
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { FftPlan, setFftKernels } from '../../dsp/core/fft.ts';
import { OverlapAdder, StftAnalyzer, StftProcessor, wolaNormalizer } from '../../dsp/core/stft.ts';
import { makeWindow } from '../../dsp/core/windows.ts';
import { seededRng } from '../helpers/rng.ts';

const noise = (n: number, seed: number) => {
  const r = seededRng(seed);
  return Float64Array.from({ length: n }, () => r() - 0.5);
};

/** A frame-dependent spectral change, so that the reference and the stream must agree frame by frame. */
function modify(spec: Float64Array, frame: number): void {
  const bins = spec.length / 2;
  for (let k = 0; k < bins; k++) {
    const g = 1 + 0.5 * Math.sin(0.37 * k + 0.11 * frame);
    const ph = 0.05 * k * ((frame % 3) - 1);
    const re = spec[2 * k]!, im = spec[2 * k + 1]!;
    spec[2 * k] = g * (re * Math.cos(ph) - im * Math.sin(ph));
    spec[2 * k + 1] = g * (re * Math.sin(ph) + im * Math.cos(ph));
  }
}

/** Direct evaluation of StftProcessor's definition over the whole signal at once. */
function reference(x: Float64Array, fftSize: number, hopSize: number, analysis: Float64Array, synthesis: Float64Array): Float64Array {
  const n = fftSize, h = hopSize, lead = n - h;
  const frames = Math.floor((x.length - 1 + lead) / h) + 1;
  const padded = new Float64Array(lead + frames * h + n);
  padded.set(x, lead);
  const sum = new Float64Array(padded.length);
  const plan = new FftPlan(n);
  const seg = new Float64Array(n), spec = plan.createHalfSpectrum(), back = new Float64Array(n);
  for (let k = 0; k < frames; k++) {
    for (let i = 0; i < n; i++) seg[i] = padded[k * h + i]! * analysis[i]!;
    plan.realForward(seg, spec);
    modify(spec, k);
    plan.realInverse(spec, back);
    for (let i = 0; i < n; i++) sum[k * h + i]! += back[i]! * synthesis[i]!;
  }
  const d = wolaNormalizer(analysis, synthesis, h);
  return Float64Array.from({ length: x.length }, (_, t) => sum[t + lead]! / d[(t + lead) % h]!);
}

const BLOCKS = [1, 333, 7, 4097, 1000, 13, 64, 2];

function stream(proc: StftProcessor, x: Float64Array): Float64Array {
  const out = new Float64Array(x.length + 1);
  let at = 0;
  for (let i = 0, j = 0; i < x.length; j++) {
    const len = Math.min(BLOCKS[j % BLOCKS.length]!, x.length - i);
    const y = proc.process(x.subarray(i, i + len));
    out.set(y, at);
    at += y.length;
    i += len;
  }
  const tail = proc.flush();
  expect(at + tail.length).toBe(x.length);
  out.set(tail, at);
  return out.subarray(0, x.length);
}

for (const choice of ['auto', 'js'] as const) {
  describe(`streaming STFT (${choice} FFT kernels) against the direct definition`, () => {
    beforeEach(() => setFftKernels(choice));
    afterEach(() => setFftKernels('auto'));

    for (const [fftSize, hopSize] of [
      [64, 16],
      [64, 24],
      [64, 64],
      [32, 1],
      [2048, 512],
      [1024, 384],
    ] as const) {
      it(`StftProcessor with a frame-dependent modification equals it exactly (N=${fftSize}, H=${hopSize})`, () => {
        // Source: the framing and WOLA definition in dsp/core/stft.ts (Allen 1977), evaluated
        // directly; the same floating-point operations in the same order, so equality is exact.
        const x = noise(fftSize === 2048 ? 20_011 : 5_003, fftSize * 7 + hopSize);
        // Hann analysis, Hamming synthesis (Hamming on both sides without overlap: Hann's zero at
        // n = 0 would leave nothing to divide by).
        const w = makeWindow(hopSize === fftSize ? 'hamming' : 'hann', fftSize);
        const ws = makeWindow('hamming', fftSize);
        const proc = new StftProcessor({ fftSize, hopSize, window: w, synthesisWindow: ws }, modify);
        const got = stream(proc, x);
        const want = reference(x, fftSize, hopSize, w, ws);
        let err = 0;
        for (let i = 0; i < x.length; i++) err = Math.max(err, Math.abs(got[i]! - want[i]!));
        expect(err).toBe(0);
      });
    }

    it('StftAnalyzer frames and OverlapAdder hops follow the documented framing', () => {
      // Source: stft.ts framing note — frame k ends at sample (k+1)·H; addFrame returns the H
      // samples the frame completes.
      const fftSize = 128, hopSize = 48;
      const x = noise(3_001, 5);
      const w = makeWindow('hann', fftSize);
      const frames: Float64Array[] = [];
      const an = new StftAnalyzer({ fftSize, hopSize, window: w }, (s, k) => {
        expect(k).toBe(frames.length);
        frames.push(s.slice());
      });
      for (let i = 0, j = 0; i < x.length; j++) {
        const len = Math.min(BLOCKS[j % BLOCKS.length]!, x.length - i);
        an.push(x.subarray(i, i + len));
        i += len;
      }
      expect(an.frameCount).toBe(Math.floor(x.length / hopSize));
      an.flush();
      expect(an.frameCount).toBe(Math.floor((x.length - 1 + fftSize - hopSize) / hopSize) + 1);
      const plan = new FftPlan(fftSize);
      const seg = new Float64Array(fftSize), spec = plan.createHalfSpectrum();
      const lead = fftSize - hopSize;
      for (let k = 0; k < frames.length; k++) {
        for (let i = 0; i < fftSize; i++) {
          const t = k * hopSize - lead + i;
          seg[i] = (t >= 0 && t < x.length ? x[t]! : 0) * w[i]!;
        }
        plan.realForward(seg, spec);
        for (let i = 0; i < spec.length; i++) expect(frames[k]![i], `frame ${k}`).toBe(spec[i]);
      }

      // Synthesis alone: the hops it returns, concatenated, are the padded WOLA sum / D.
      const adder = new OverlapAdder({ fftSize, hopSize, window: w });
      const d = wolaNormalizer(w, w, hopSize);
      const sum = new Float64Array((frames.length + 2) * hopSize + fftSize);
      const back = new Float64Array(fftSize);
      for (let k = 0; k < frames.length; k++) {
        const hop = adder.addFrame(frames[k]!);
        expect(hop.length).toBe(hopSize);
        plan.realInverse(frames[k]!, back);
        for (let i = 0; i < fftSize; i++) sum[k * hopSize + i]! += back[i]! * w[i]!;
        for (let i = 0; i < hopSize; i++) expect(hop[i], `hop ${k} sample ${i}`).toBe(sum[k * hopSize + i]! / d[i]!);
      }
    });

    it('windows passed in are captured at construction', () => {
      // Source: documented behaviour (the FFT plan may keep a copy of the window).
      const fftSize = 64, hopSize = 16;
      const w = makeWindow('hann', fftSize);
      const x = noise(1_000, 11);
      const a = new StftProcessor({ fftSize, hopSize, window: w }, () => {});
      const first = a.process(x);
      w.fill(0.5); // after construction: no effect on the processor made before
      const b = new StftProcessor({ fftSize, hopSize, window: makeWindow('hann', fftSize) }, () => {});
      const second = b.process(x);
      const y = a.process(x);
      const z = b.process(x);
      expect(Array.from(first)).toEqual(Array.from(second));
      expect(Array.from(y)).toEqual(Array.from(z));
    });
  });
}
