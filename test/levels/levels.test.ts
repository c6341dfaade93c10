/**
 * The levels op end to end on in-memory sources: RMS / DC / clipping against closed forms,
 * dropouts, head/tail silence and bandwidth against signals built with known answers.
 */
import { describe, expect, it } from 'vitest';
import { MemorySource } from '../../dsp/source.ts';
import { levels, type LevelsResult } from '../../dsp/ops/levels.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { findingsOf } from '../../dsp/ops/diagnose.ts';
import { FftPlan } from '../../dsp/core/fft.ts';
import { seededRng, gaussian } from '../helpers/rng.ts';

const FS = 48000;

async function run(channels: Float64Array[], fs = FS, params = {}, meta?: { bitsPerSample: number; sampleFormat: 'int' | 'float' }): Promise<LevelsResult> {
  const src = new MemorySource(channels, fs);
  if (meta) Object.assign(src, meta);
  return levels.run(src, validateParams(levels.params, params), silentContext);
}

/** White Gaussian noise with RMS `rmsDbfs`. */
function noise(n: number, rmsDbfs: number, seed: number): Float64Array {
  const g = gaussian(seededRng(seed));
  const a = Math.pow(10, rmsDbfs / 20);
  return Float64Array.from({ length: n }, () => a * g());
}

describe('levels: sample statistics', () => {
  it('reads RMS and DC offset of a sine plus DC exactly', async () => {
    // Source: closed form — mean square of A·sin + d over whole cycles is A²/2 + d².
    const A = 0.5, d = 0.01, n = FS * 2;
    const x = Float64Array.from({ length: n }, (_, i) => A * Math.sin((2 * Math.PI * 1000 * i) / FS) + d);
    const r = await run([x]);
    expect(r.channels[0]!.rmsDbfs).toBeCloseTo(10 * Math.log10((A * A) / 2 + d * d), 6);
    expect(r.channels[0]!.dcOffset).toBeCloseTo(d, 9);
    expect(r.channels[0]!.peakDbfs).toBeCloseTo(20 * Math.log10(A + d), 4);
    expect(r.channels[0]!.clippedSamples).toBe(0);
  });

  it('counts clipped runs of a hard-clipped sine', async () => {
    // Source: closed form — 2·sin clipped at ±1 sits at full scale where |sin| ≥ 1/2, i.e. 2/3 of
    // each half cycle: 100 Hz at 48 kHz → 2 runs of ~160 samples per cycle, 200 runs in 1 s.
    const n = FS;
    const x = Float64Array.from({ length: n }, (_, i) => Math.max(-1, Math.min(1, 2 * Math.sin((2 * Math.PI * 100 * (i + 0.5)) / FS))));
    const r = await run([x]);
    expect(r.channels[0]!.clippedRunCount).toBe(200);
    expect(Math.abs(r.channels[0]!.clippedSamples - 200 * 160)).toBeLessThanOrEqual(200);
    expect(r.clippedRuns.length).toBe(100); // the listing is capped
    expect(r.clippedRuns[0]!.startSeconds).toBeCloseTo(1 / 1200, 4); // first crossing of sin = 1/2 at 30°
  });

  it('uses the top integer code as full scale for 16-bit sources', async () => {
    // Source: two's complement — the largest positive 16-bit code is 32767/32768.
    const top = 32767 / 32768;
    const x = new Float64Array(FS).fill(0.1);
    x.fill(top, 1000, 1010);
    x.fill(-1, 2000, 2002); // two samples: shorter than a run
    const r = await run([x], FS, {}, { bitsPerSample: 16, sampleFormat: 'int' });
    expect(r.channels[0]!.clippedSamples).toBe(12);
    expect(r.channels[0]!.clippedRunCount).toBe(1);
  });
});

describe('levels: dropouts and level dips', () => {
  // The inserted gaps are the ground truth (definition: sudden drops ≥ 20 dB lasting 5–500 ms).
  it('lists sudden drops of 5–500 ms in steady noise as level dips, and nothing else', async () => {
    const n = FS * 12;
    const l = noise(n, -20, 1), r = noise(n, -20, 2);
    const gap = (ch: Float64Array[], start: number, ms: number, db: number) => {
      const a = Math.round(start * FS), b = a + Math.round((ms / 1000) * FS);
      for (const c of ch) for (let i = a; i < b; i++) c[i]! *= Math.pow(10, -db / 20);
    };
    gap([l, r], 1.0, 8, 30); // both channels
    gap([l], 3.0, 50, 25); // one channel
    gap([l, r], 5.0, 300, 80);
    gap([l, r], 7.0, 3, 40); // too short
    gap([l, r], 8.0, 800, 40); // too long: a pause
    // A slow fade to −30 dB over 200 ms and back: not sudden.
    for (let i = 0; i < FS * 0.4; i++) {
      const t = i / (FS * 0.4);
      const g = Math.pow(10, (-30 * Math.sin(Math.PI * t)) / 20);
      l[Math.round(10.5 * FS) + i]! *= g;
      r[Math.round(10.5 * FS) + i]! *= g;
    }
    const res = await run([l, r]);
    expect(res.dropouts).toEqual([]);
    expect(res.levelDips.length).toBe(3);
    const [a, b, c] = res.levelDips as [typeof res.levelDips[0], typeof res.levelDips[0], typeof res.levelDips[0]];
    expect(Math.abs(a.startSeconds - 1.0)).toBeLessThan(0.002);
    expect(Math.abs(a.durationSeconds - 0.008)).toBeLessThan(0.002);
    expect(Math.abs(a.depthDb - 30)).toBeLessThan(1.5);
    expect(a.channels).toEqual([1, 2]);
    expect(Math.abs(b.startSeconds - 3.0)).toBeLessThan(0.002);
    expect(Math.abs(b.durationSeconds - 0.05)).toBeLessThan(0.002);
    expect(Math.abs(b.depthDb - 25)).toBeLessThan(1.5);
    expect(b.channels).toEqual([1]);
    expect(Math.abs(c.startSeconds - 5.0)).toBeLessThan(0.002);
    expect(Math.abs(c.durationSeconds - 0.3)).toBeLessThan(0.002);
    expect(c.depthDb).toBeGreaterThan(60);
    const f = findingsOf(levels, res, { sampleRateHz: FS, channelCount: 2, frames: n });
    // A dip in the level alone may be a gap in the playing: listed for listening, not a fault.
    expect(f.some((x) => x.title === '3 brief level dips' && x.severity === 'info')).toBe(true);
    expect(f.some((x) => x.op === 'levels' && x.severity === 'warn')).toBe(false);
  });

  it('finds every run of exact digital zeros inside programme, to the sample', async () => {
    // Ground truth: zero runs written into running noise (5, 12 and 40 ms; the bar is
    // every run ≥ 5 ms found, start ±1 ms). Common practice: digital zeros inside programme are a
    // transfer fault, never part of the recording.
    const n = FS * 6;
    const x = noise(n, -24, 11);
    const y = noise(n, -24, 12);
    const runs: [number, number][] = [[1.2345, 0.005], [2.5, 0.012], [4.0011, 0.04]];
    for (const [t, d] of runs) {
      const a = Math.round(t * FS);
      x.fill(0, a, a + Math.round(d * FS));
      if (t > 2) y.fill(0, a, a + Math.round(d * FS));
    }
    const res = await run([x, y]);
    expect(res.dropouts.length).toBe(3);
    res.dropouts.forEach((d, i) => {
      expect(Math.abs(d.startSeconds - runs[i]![0])).toBeLessThan(1 / FS + 1e-9);
      expect(Math.abs(d.durationSeconds - runs[i]![1])).toBeLessThan(2 / FS);
    });
    expect(res.dropouts[0]!.channels).toEqual([1]);
    expect(res.dropouts[1]!.channels).toEqual([1, 2]);
    const f = findingsOf(levels, res, { sampleRateHz: FS, channelCount: 2, frames: n });
    expect(f.some((x) => x.title === '3 dropouts (digital silence)' && x.severity === 'warn')).toBe(true);
  });

  it('does not call the digital silence between decaying hits, or a long pause, a dropout', async () => {
    // Struck sounds decay exponentially (Fletcher & Rossing, The Physics of Musical Instruments,
    // §2) into digital silence before the next hit; a pause of 1 s of zeros is silence, not a fault.
    const n = FS * 6;
    const x = new Float64Array(n);
    const burst = noise(FS, -12, 13);
    for (let hit = 0; hit < 8; hit++) {
      const a = Math.round((0.1 + 0.5 * hit) * FS);
      for (let i = 0; i < 0.3 * FS; i++) {
        const v = burst[i]! * Math.exp(-i / (0.02 * FS));
        // Quantised to 16 bits, as a file would hold it, so the tail reaches exact zeros.
        x[a + i] = Math.round(v * 32768) / 32768;
      }
    }
    const res = await run([x]);
    expect(res.dropouts).toEqual([]);
    // A sustained sound cut dead, then a second of zeros, then more sound: a pause, not a dropout.
    const y = noise(n, -20, 14);
    y.fill(0, 2 * FS, 3 * FS);
    expect((await run([y])).dropouts).toEqual([]);
  });

  it('does not call the ordinary ups and downs of a 60 Hz-heavy programme dropouts', async () => {
    // A strong low tone makes 1 ms frames dip near its zero crossings; that is not a dropout.
    const n = FS * 4;
    const x = noise(n, -40, 3);
    for (let i = 0; i < n; i++) x[i]! += 0.3 * Math.sin((2 * Math.PI * 60 * i) / FS);
    const r = await run([x]);
    expect(r.dropouts).toEqual([]);
    expect(r.levelDips).toEqual([]);
  });
});

describe('levels: silence and bandwidth', () => {
  it('measures silence at the head and tail', async () => {
    // Built with known answers: 1.5 s digital silence, 3 s of noise at −20 dBFS, 2.25 s at −80 dBFS.
    const n = Math.round(FS * 6.75);
    const x = noise(n, -80, 4);
    x.fill(0, 0, Math.round(1.5 * FS));
    const prog = noise(3 * FS, -20, 5);
    x.set(prog, Math.round(1.5 * FS));
    const r = await run([x, x]);
    expect(Math.abs(r.silence.headSeconds - 1.5)).toBeLessThanOrEqual(0.011);
    expect(Math.abs(r.silence.tailSeconds - 2.25)).toBeLessThanOrEqual(0.011);
    expect(r.silence.allSilent).toBe(false);
    const all = await run([new Float64Array(FS)]);
    expect(all.silence.allSilent).toBe(true);
  });

  /** White noise shaped in the frequency domain with `gain(f)` (one long FFT), plus a floor. */
  function shaped(n: number, gain: (hz: number) => number, floorDbfs: number, seed: number): Float64Array {
    const plan = new FftPlan(n);
    const x = noise(n, -20, seed);
    const spec = plan.createHalfSpectrum();
    plan.realForward(x, spec);
    for (let k = 0; k <= n / 2; k++) {
      const gk = gain((k * FS) / n);
      spec[2 * k]! *= gk;
      spec[2 * k + 1]! *= gk;
    }
    const y = new Float64Array(n);
    plan.realInverse(spec, y);
    const fl = noise(n, floorDbfs, seed + 100);
    for (let i = 0; i < n; i++) y[i]! += fl[i]!;
    return y;
  }

  it('finds a 15 kHz band limit', async () => {
    // Built with a known answer: brick-wall at 15 kHz (exact, frequency domain), floor at −110 dBFS.
    const x = shaped(1 << 19, (hz) => (hz <= 15000 ? 1 : 0), -110, 6);
    const r = await run([x]);
    expect(Math.abs(r.bandwidthHz - 15000)).toBeLessThan(150);
  });

  it('reports the Nyquist frequency for full-band pink noise', async () => {
    // Pink (−3 dB/octave) noise has content to the top of the band: no limit to report.
    const x = shaped(1 << 19, (hz) => (hz > 0 ? 1 / Math.sqrt(Math.max(hz, 20) / 1000) : 0), -110, 7);
    const r = await run([x]);
    expect(r.bandwidthHz).toBe(FS / 2);
    expect(r.longTermSpectrum.frequenciesHz.length).toBeGreaterThan(100);
  });
});

describe('true peak above full scale', () => {
  it('is a warning, not information', async () => {
    // Source: ITU-R BS.1770-4 Annex 2 — a sine at a quarter of the sample rate sampled 45° off its
    // crests has samples at 1/√2 of its amplitude, so its true peak is 3.01 dB above its sample peak.
    const FS2 = 48000, n = FS2;
    const sine = (scale: number) => Float64Array.from({ length: n }, (_, i) => scale * Math.SQRT2 * Math.sin((Math.PI * i) / 2 + Math.PI / 4));
    const judge = async (scale: number) => {
      const src = new MemorySource([sine(scale), sine(scale)], FS2);
      const r = (await levels.run(src, validateParams(levels.params, {}), silentContext)) as LevelsResult;
      const f = levels.findings!(r, { sampleRateHz: FS2, channelCount: 2, frames: n }).find((x) => x.title.startsWith('Loudness'))!;
      return { tp: r.truePeakDbtp, severity: f.severity };
    };
    const over = await judge(0.99); // samples at −0.09 dBFS, true peak ≈ +2.9 dBTP
    expect(over.tp).toBeGreaterThan(2.5);
    expect(over.severity).toBe('warn');
    const under = await judge(0.5); // true peak ≈ −3 dBTP
    expect(under.tp).toBeLessThan(-2.5);
    expect(under.severity).toBe('info');
  });
});
