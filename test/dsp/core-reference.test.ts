/** DSP core against numpy/scipy reference values (test/fixtures/core/make_core_fixtures.py). */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { WelchAccumulator } from '../../dsp/core/welch.ts';
import { analyticSignal } from '../../dsp/core/analytic.ts';
import { enbwBins, coherentGain, kaiserBeta, kaiserLength, makeWindow } from '../../dsp/core/windows.ts';
import { SosFilter } from '../../dsp/core/biquad.ts';

const ref = JSON.parse(readFileSync(new URL('../fixtures/core/core-reference.json', import.meta.url), 'utf8'));
const FS = 48000;

/** The same formula as test_signal() in the fixture script. */
function testSignal(n: number): Float64Array {
  const x = new Float64Array(n);
  for (let t = 0; t < n; t++) {
    x[t] =
      0.5 * Math.sin((2 * Math.PI * 1000 * t) / FS) +
      0.25 * Math.sin((2 * Math.PI * 2345.6 * t) / FS + 0.3) +
      0.05 * Math.sin((2 * Math.PI * (100 + (5000 * t) / n) * t) / FS);
  }
  return x;
}

describe('Welch long-term spectrum', () => {
  it('matches scipy.signal.welch (spectrum and density scalings), streamed in odd blocks', () => {
    // Source: scipy.signal.welch (scipy 1.17), detrend=False, Hann, nperseg 1024, noverlap 512.
    const x = testSignal(ref.welch.n);
    const acc = new WelchAccumulator({ sampleRateHz: FS, channelCount: 1, fftSize: 1024, hopSize: 512 });
    for (let i = 0; i < x.length; i += 777) acc.push([x.subarray(i, Math.min(x.length, i + 777))]);
    const r = acc.result();
    const spec: number[] = ref.welch.spectrum;
    const dens: number[] = ref.welch.density;
    expect(r.levelsDb[0]!.length).toBe(spec.length);
    for (let k = 0; k < spec.length; k++) {
      if (spec[k]! < 1e-20) continue;
      // Our amplitude scaling = scipy 'spectrum' × 2 for interior bins (peak vs mean-square).
      const edge = k === 0 || k === spec.length - 1;
      const expectedDb = 10 * Math.log10((edge ? 1 : 2) * spec[k]!);
      expect(r.levelsDb[0]![k]!).toBeCloseTo(expectedDb, 6);
      expect(r.psdDbPerHz[0]![k]!).toBeCloseTo(10 * Math.log10(dens[k]!), 6);
    }
  });

  it('reads a full-scale sine at 0 dBFS at its bin', () => {
    // Source: definition of the dBFS convention (a full-scale sine peaks at 0 dBFS; AES17) with
    // coherent-gain correction (Harris 1978). Bin-centred frequency so there is no scalloping loss.
    const n = 65536, fftSize = 4096, k0 = 100;
    const f = (k0 * FS) / fftSize;
    const x = Float64Array.from({ length: n }, (_, t) => Math.sin((2 * Math.PI * f * t) / FS));
    const acc = new WelchAccumulator({ sampleRateHz: FS, channelCount: 1, fftSize });
    acc.push([x]);
    expect(acc.result().levelsDb[0]![k0]!).toBeCloseTo(0, 9);
  });
});

describe('analytic signal', () => {
  it('matches scipy.signal.hilbert for a non-power-of-two length', () => {
    // Source: scipy.signal.hilbert (scipy 1.17).
    const x = testSignal(ref.hilbert.n);
    const { re, im } = analyticSignal(x);
    for (let i = 0; i < x.length; i++) {
      expect(re[i]!).toBeCloseTo(x[i]!, 12);
      expect(im[i]!).toBeCloseTo(ref.hilbert.imag[i], 9);
    }
  });
});

describe('windows and Kaiser design', () => {
  const close = (a: Float64Array, b: number[]) => {
    expect(a.length).toBe(b.length);
    for (let i = 0; i < a.length; i++) expect(a[i]!).toBeCloseTo(b[i]!, 12);
  };
  it('match scipy.signal.windows', () => {
    // Source: scipy.signal.windows (scipy 1.17).
    close(makeWindow('hann', 8, { symmetric: true }), ref.windows.hann8sym);
    close(makeWindow('hann', 8), ref.windows.hann8periodic);
    close(makeWindow('hamming', 9, { symmetric: true }), ref.windows.hamming9sym);
    close(makeWindow('blackman-harris', 16), ref.windows.blackmanharris16periodic);
    close(makeWindow('kaiser', 11, { symmetric: true, beta: 8.6 }), ref.windows.kaiser11beta8_6sym);
  });
  it('have the published coherent gain and noise bandwidth', () => {
    // Source: Harris (1978), Proc. IEEE 66(1), Table 1: Hann CG 0.50, ENBW 1.50 bins;
    // 4-term Blackman-Harris ENBW 2.00 bins.
    const hann = makeWindow('hann', 4096);
    expect(coherentGain(hann)).toBeCloseTo(0.5, 9);
    expect(enbwBins(hann)).toBeCloseTo(1.5, 6);
    expect(enbwBins(makeWindow('blackman-harris', 4096))).toBeCloseTo(2.0, 2);
  });
  it('Kaiser β and length match scipy.signal.kaiser_beta / kaiserord', () => {
    // Source: scipy.signal.kaiser_beta and kaiserord (β(65) = 6.20426 is scipy's documented example).
    expect(kaiserBeta(65)).toBeCloseTo(ref.kaiser.beta65, 10);
    expect(kaiserBeta(65)).toBeCloseTo(6.20426, 5);
    expect(kaiserBeta(100)).toBeCloseTo(ref.kaiser.beta100, 10);
    expect(kaiserBeta(140)).toBeCloseTo(ref.kaiser.beta140, 10);
    expect(kaiserBeta(40)).toBeCloseTo(ref.kaiser.beta40, 10);
    const dw = (2 * Math.PI * 2050) / 44100;
    expect(kaiserLength(140, dw)).toBe(ref.kaiser.ord140[0]);
    expect(kaiserLength(100, dw)).toBe(ref.kaiser.ord100[0]);
  });
});

describe('IIR filtering', () => {
  it('matches scipy.signal.lfilter, streamed in blocks', () => {
    // Source: scipy.signal.lfilter (scipy 1.17) with the same coefficients.
    const { b, a, n, y, stride } = ref.lfilter;
    const f = new SosFilter([{ b0: b[0], b1: b[1], b2: b[2], a1: a[1], a2: a[2] }]);
    const x = testSignal(n);
    const out = new Float64Array(n);
    for (let i = 0; i < n; i += 333) out.set(f.process(x.subarray(i, Math.min(n, i + 333))), i);
    for (let j = 0; j < y.length; j++) expect(out[j * stride]!).toBeCloseTo(y[j], 12);
  });
});
