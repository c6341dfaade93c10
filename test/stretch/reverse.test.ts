/**
 * Reverse (dsp/reverse/reverse.ts, dsp/ops/reverse.ts) and reversed-channel detection
 * (dsp/reverse/detect.ts, dsp/ops/reversed.ts), in memory.
 */
import { describe, expect, it } from 'vitest';
import { MemorySource, collectBlocks, type AudioSource, type Block, type BlockOptions } from '../../dsp/source.ts';
import { reverseBlocks } from '../../dsp/reverse/reverse.ts';
import { REVERSED_SCORE_THRESHOLD, asymmetryScore, detectReversedChannels, judgeEnvelope } from '../../dsp/reverse/detect.ts';
import { bandAsymmetry } from '../../dsp/reverse/bands.ts';
import { reverse } from '../../dsp/ops/reverse.ts';
import { reversed } from '../../dsp/ops/reversed.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { FftPlan } from '../../dsp/core/fft.ts';
import { clickTrain, pluckPhrase } from '../helpers/plucks.ts';
import { rosenbergVoice } from '../helpers/voice-like.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

const FS = 48000;
const flip = (x: Float64Array) => x.slice().reverse();

/** A source whose passes yield irregular block sizes (forward and reverse differ), to test re-cutting. */
class RaggedSource implements AudioSource {
  readonly channelCount: number;
  readonly frames: number;
  readonly #inner: MemorySource;
  constructor(channels: Float64Array[], readonly sampleRateHz: number) {
    this.#inner = new MemorySource(channels, sampleRateHz);
    this.channelCount = channels.length;
    this.frames = channels[0]!.length;
  }
  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const sizes = options.reverse ? [1000, 3, 4097] : [777, 12000, 5];
    let i = 0;
    const all = await collectBlocks(this.#inner.blocks({ ...options, blockFrames: 1 << 30 }), this.channelCount);
    const n = all[0]!.length;
    for (let at = 0; at < n; ) {
      const k = Math.min(n - at, sizes[i++ % sizes.length]!);
      yield all.map((c) => c.slice(at, at + k));
      at += k;
    }
  }
}

async function render(source: AudioSource, params: Record<string, unknown>): Promise<Float64Array[]> {
  const r = await reverse.prepare(source, validateParams(reverse.params, params as never), silentContext);
  return collectBlocks(r.blocks, source.channelCount);
}

const sameBits = (a: Float64Array, b: Float64Array) => a.length === b.length && a.every((v, i) => Object.is(v, b[i]));

describe('reverse', () => {
  const g = gaussian(seededRng(17));
  const left = Float64Array.from({ length: 50_001 }, () => g());
  const right = Float64Array.from({ length: 50_001 }, () => g());

  it('reverses the whole file sample for sample, and twice is the identity bit for bit', async () => {
    // Source: definition y[i] = x[N−1−i]; exact identity reverse∘reverse = id.
    for (const src of [new MemorySource([left, right], FS), new RaggedSource([left, right], FS)]) {
      const once = await render(src, {});
      expect(sameBits(once[0]!, flip(left))).toBe(true);
      expect(sameBits(once[1]!, flip(right))).toBe(true);
      const twice = await render(new MemorySource(once, FS), {});
      expect(sameBits(twice[0]!, left) && sameBits(twice[1]!, right)).toBe(true);
    }
  });

  it('reverses only the chosen channel and range, copying the rest', async () => {
    // Source: definition, with --from/--to in seconds rounded to frames.
    for (const src of [new MemorySource([left, right], FS), new RaggedSource([left, right], FS)]) {
      const out = await render(src, { channels: [2], fromSeconds: 0.1, toSeconds: 0.75 });
      const a = Math.round(0.1 * FS), b = Math.round(0.75 * FS);
      expect(sameBits(out[0]!, left)).toBe(true);
      const expected = right.slice();
      expected.set(flip(right.subarray(a, b)), a);
      expect(sameBits(out[1]!, expected)).toBe(true);
    }
  });

  it('keeps the magnitude spectrum (DFT of a reversed buffer = e^{−j2πk(N−1)/N}·X*[k])', async () => {
    // Source: DFT reversal property (REFERENCES §10; Oppenheim & Schafer, DTSP, DFT properties).
    const n = 4096;
    const x = left.subarray(0, n);
    const [y] = await render(new MemorySource([Float64Array.from(x)], FS), {});
    const plan = new FftPlan(n);
    const X = plan.createHalfSpectrum(), Y = plan.createHalfSpectrum();
    plan.realForward(x, X);
    plan.realForward(y!, Y);
    for (let k = 0; k <= n / 2; k++) {
      // Y[k] = e^{−j2πk(N−1)/N} · conj(X[k])
      const a = (-2 * Math.PI * k * (n - 1)) / n;
      const er = Math.cos(a) * X[2 * k]! + Math.sin(a) * X[2 * k + 1]!;
      const ei = Math.sin(a) * X[2 * k]! - Math.cos(a) * X[2 * k + 1]!;
      expect(Math.abs(Y[2 * k]! - er)).toBeLessThan(1e-9);
      expect(Math.abs(Y[2 * k + 1]! - ei)).toBeLessThan(1e-9);
    }
  });

  it('refuses channels that do not exist, empty ranges and ranges past the end', async () => {
    // Source: the bad-input rule (clear message; the CLI turns ParameterError into exit 2).
    const src = new MemorySource([left, right], FS);
    await expect(render(src, { channels: [3] })).rejects.toThrow(/channel 3 does not exist \(the input has 2\)/);
    await expect(render(src, { channels: [1.5] })).rejects.toThrow(ParameterError);
    await expect(render(src, { fromSeconds: 0.5, toSeconds: 0.5 })).rejects.toThrow(/the range is empty/);
    await expect(render(src, { fromSeconds: 0.6, toSeconds: 0.2 })).rejects.toThrow(/the range is empty/);
    await expect(render(src, { fromSeconds: 5 })).rejects.toThrow(/only 1\.042 s long/);
    expect(() => validateParams(reverse.params, { channels: [0] })).toThrow(ParameterError);
  });

  it('streams: the reversed range is read with source.blocks({ reverse: true })', async () => {
    // Source: the streaming contract — no pass reads the whole range at once.
    const asked: BlockOptions[] = [];
    const inner = new MemorySource([left, right], FS);
    const spy: AudioSource = {
      sampleRateHz: FS,
      channelCount: 2,
      frames: inner.frames,
      blocks: (o?: BlockOptions) => {
        asked.push(o ?? {});
        return inner.blocks({ ...o, blockFrames: 4096 });
      },
    };
    let maxBlock = 0;
    for await (const b of reverseBlocks(spy, { startFrame: 100, endFrame: 40_000 })) maxBlock = Math.max(maxBlock, b[0]!.length);
    expect(asked.some((o) => o.reverse === true && o.startFrame === 100 && o.endFrame === 40_000)).toBe(true);
    expect(maxBlock).toBeLessThanOrEqual(4096);
  });
});

describe('reversed-channel detection', () => {
  const pl = pluckPhrase(FS, 8);
  const vo = rosenbergVoice(FS, 8, 5);

  it('finds the reversed channel in plucked and in voice-like material', async () => {
    // Source: construction — channel 2 is channel material played backwards (exact reversal).
    // The other channel is never called reversed; a short phrase of four overlapping plucks has one
    // hard start only and is "not determined" (null), the voice-like one is read as forward.
    const lines: string[] = [];
    for (const [name, x, other, otherReads] of [['plucks', pl, rosenbergVoice(FS, 8, 6), false], ['voice-like', vo, pluckPhrase(FS, 8, 0.25, 4), null]] as const) {
      const res = await detectReversedChannels(new MemorySource([other, flip(x)], FS));
      lines.push(`${name}: ch1 ${res.channels[0]!.score.toFixed(3)}, ch2 (reversed) ${res.channels[1]!.score.toFixed(3)}`);
      expect(res.channels[1]!.likely).toBe(true);
      expect(res.channels[0]!.likely).toBe(otherReads);
      const res2 = await detectReversedChannels(new MemorySource([flip(x), other], FS));
      expect(res2.channels.map((c) => c.likely)).toEqual([true, otherReads]);
    }
    console.log('[reversed] scores:\n  ' + lines.join('\n  '));
  });

  it('reads forward material as forward and says "not determined" for time-symmetric signals', async () => {
    // Source: construction — struck/plucked decays and speech-like syllables start quickly and die
    // away slowly (common practice), so they read as forward; tones, noise, clicks and gated tones
    // are the same played either way, so any direction claimed for them would be a guess.
    // (Before, `likely: false` meant only "not reversed"; it now means "plays forwards".)
    const g = gaussian(seededRng(4));
    const signals: [string, Float64Array, boolean | null][] = [
      ['plucks', pl, false],
      ['voice-like', vo, false],
      ['sine', Float64Array.from({ length: 4 * FS }, (_, i) => 0.3 * Math.sin(i * 0.05)), null],
      ['noise', Float64Array.from({ length: 4 * FS }, () => 0.1 * g()), null],
      ['click train', clickTrain(FS, 4, 0.1, 0.2).signal, null],
      ['tone bursts', Float64Array.from({ length: 4 * FS }, (_, i) => (Math.floor(i / 12000) % 2 ? 0.3 * Math.sin(i * 0.05) : 0)), null],
      // A line-up tone that ends abruptly into quieter programme: one abrupt stop, no reversal.
      ['tone then noise', Float64Array.from({ length: 10 * FS }, (_, i) => (i < 7 * FS ? 0.25 * Math.sin((2 * Math.PI * 3150 * i) / FS) : 0.05 * g())), null],
    ];
    const lines: string[] = [];
    for (const [name, x, expected] of signals) {
      for (const y of [x, flip(x)]) {
        const res = await detectReversedChannels(new MemorySource([y], FS));
        const c = res.channels[0]!;
        lines.push(`${name}${y === x ? '' : ' (reversed)'}: ${c.score.toFixed(3)} ${String(c.likely)} (${c.abruptStarts} hard starts, ${c.abruptStops} hard stops, ${c.basis})`);
        // Reversed, forward material must read reversed; symmetric material stays undetermined.
        expect(c.likely).toBe(y === x || expected === null ? expected : true);
        // |score| ≥ the threshold only with a determined direction (the editor reads the score).
        if (c.likely === null) expect(Math.abs(c.score)).toBeLessThan(REVERSED_SCORE_THRESHOLD);
      }
    }
    console.log('[reversed] forward and symmetric signals:\n  ' + lines.join('\n  '));
  });

  it('is antisymmetric under time reversal: score, hard edges, ramps and the decision mirror', () => {
    // Source: exact identity — reversal maps every level step d to −d, every hard start to a hard
    // stop and every decay after a start to a swell into a stop, so the score changes sign and the
    // decision flips (or stays undetermined).
    const power = Float32Array.from({ length: 3000 }, (_, i) => 1e-3 + Math.exp(-((i % 37) / 6)) * (1 + (i % 5)));
    const a = asymmetryScore(power).score;
    const b = asymmetryScore(power.slice().reverse()).score;
    expect(a).not.toBe(0);
    expect(b).toBeCloseTo(-a, 12);
    const blockPower = (x: Float64Array) => {
      const n = Math.floor(x.length / 480), p = new Float32Array(n);
      for (let i = 0; i < n; i++) {
        let s = 0;
        for (let k = 0; k < 480; k++) s += x[i * 480 + k]! ** 2;
        p[i] = s / 480;
      }
      return p;
    };
    const decaying = Float32Array.from({ length: 800 }, (_, i) => (i < 50 ? 1e-9 : 10 ** (-(i - 50) * 0.02)));
    for (const p of [blockPower(pl), blockPower(vo), blockPower(pluckPhrase(FS, 8, 0.25, 4)), decaying, power]) {
      const f = judgeEnvelope(p), r = judgeEnvelope(p.slice().reverse());
      expect(r.skew!).toBeCloseTo(-f.skew!, 12);
      expect([r.abruptStarts, r.abruptStops]).toEqual([f.abruptStops, f.abruptStarts]);
      expect([r.swellsIntoStops, r.decaysAfterStarts]).toEqual([f.decaysAfterStarts, f.swellsIntoStops]);
      expect(r.likely).toBe(f.likely === null ? null : !f.likely);
    }
    // One exponential decay after a hard start (a struck note) is one sound only: not determined,
    // as its mirror image (one swell into a hard stop, which a fade-in then a cut can also give) is.
    expect(judgeEnvelope(decaying)).toMatchObject({ likely: null, basis: 'one-ramp', decaysAfterStarts: 1 });
    expect(judgeEnvelope(decaying.slice().reverse())).toMatchObject({ likely: null, basis: 'one-ramp', swellsIntoStops: 1 });
  });

  it('suggests reversing the channel it found, and applying the suggestion clears the finding', async () => {
    // Source: the operation contract (finding → suggestion {op:'reverse', params:{channels:[n]}}).
    const src = new MemorySource([pl, flip(vo)], FS);
    const result = await reversed.run(src, {}, silentContext);
    const facts = { sampleRateHz: FS, channelCount: 2, frames: src.frames };
    const f = reversed.findings!(result, facts);
    expect(f).toHaveLength(1);
    expect(f[0]!.suggestion).toEqual({ op: 'reverse', params: { channels: [2] } });
    expect(reversed.toJson!(result)).toEqual({ reversed: { channels: result.channels.map(({ channel, likely, score }) => ({ channel, likely, score })) } });
    const fixed = await render(src, f[0]!.suggestion!.params as Record<string, unknown>);
    const again = await reversed.run(new MemorySource(fixed, FS), {}, silentContext);
    expect(again.channels.every((c) => c.likely === false)).toBe(true);
    expect(reversed.findings!(again, facts)[0]!.severity).toBe('ok');
  });

  it('says "not determined", with the reason and no fix, when the evidence is thin', async () => {
    // Source: the findings rule of the architecture (weak evidence: say so, no suggested fix).
    const g = gaussian(seededRng(9));
    const noise = Float64Array.from({ length: pl.length }, () => 0.1 * g());
    const src = new MemorySource([pl, noise], FS);
    const result = await reversed.run(src, {}, silentContext);
    expect(result.channels.map((c) => c.likely)).toEqual([false, null]);
    const f = reversed.findings!(result, { sampleRateHz: FS, channelCount: 2, frames: src.frames });
    expect(f).toHaveLength(1);
    expect(f[0]).toMatchObject({ severity: 'info', title: 'Direction of channel 2 not determined' });
    expect(f[0]!.sentence).toMatch(/not determined: .*neither start nor stop abruptly/);
    expect(f[0]!.suggestion).toBeUndefined();
    const short = await reversed.run(new MemorySource([pl.subarray(0, 0.2 * FS)], FS), {}, silentContext);
    expect(short.channels[0]).toMatchObject({ likely: null, basis: 'too-little-sound' });
  });
});

describe('band cue (dsp/reverse/bands.ts)', () => {
  /**
   * Legato chords: each chord's notes (six harmonics each) rise linearly over 25 ms, hold, and
   * when the next chord arrives fade exponentially (60 dB in 0.8 s) under it — the envelope of a
   * sampled sustained instrument (attack, sustain, exponential release: common practice). The
   * broadband level hardly moves at a chord change; the bands of the partials do.
   */
  function legatoChords(seconds: number): Float64Array {
    const n = Math.round(seconds * FS);
    const x = new Float64Array(n);
    const roots = [110, 146.8, 123.5, 164.8, 98, 130.8];
    const chordSeconds = 1.1;
    for (let k = 0; k * chordSeconds < seconds - 0.5; k++) {
      const t0 = 0.2 + k * chordSeconds, t1 = t0 + chordSeconds;
      for (const ratio of [1, 1.26, 1.5]) {
        const f0 = roots[k % roots.length]! * ratio;
        for (let i = Math.round(t0 * FS); i < n; i++) {
          const t = i / FS;
          const env = t < t0 + 0.025 ? (t - t0) / 0.025 : t < t1 ? 1 : 10 ** ((-60 * (t - t1)) / 0.8 / 20);
          if (t > t1 && env < 1e-4) break;
          let v = 0;
          for (let h = 1; h <= 6; h++) v += Math.sin(2 * Math.PI * f0 * h * (t - t0)) / h;
          x[i]! += 0.05 * env * v;
        }
      }
    }
    return x;
  }

  it('is antisymmetric under time reversal of the band levels', () => {
    // Source: exact identity — reversing the frames maps every 30 ms change d to −d in every band,
    // so the skew, the bands' median and the shares leaning each way mirror.
    const frames = 900, bands = 8;
    const power = Float32Array.from({ length: frames * bands }, (_, i) => {
      const t = Math.floor(i / bands), b = i % bands;
      return 1e-4 + Math.exp(-((t + 7 * b) % 41) / (3 + b)) * (1 + ((t * (b + 1)) % 3));
    });
    const back = new Float32Array(power.length);
    for (let t = 0; t < frames; t++) back.set(power.subarray(t * bands, (t + 1) * bands), (frames - 1 - t) * bands);
    const f = bandAsymmetry(frames, bands, power), r = bandAsymmetry(frames, bands, back);
    expect(f.score).not.toBe(0);
    expect(r.score).toBeCloseTo(-f.score, 12);
    expect(r.bandMedian).toBeCloseTo(-f.bandMedian, 12);
    expect([r.positiveShare, r.negativeShare]).toEqual([f.negativeShare, f.positiveShare]);
  });

  it('turns every band round for reversed legato chords, and leaves one cut "not determined"', async () => {
    // Source: construction (the chords above, and the same samples in reverse order). Every band
    // of the forward chords leans forward and every band of the reversed ones leans reversed; but
    // the reversed sequence has one hard stop only (the first attack), the shape of a forward
    // excerpt faded in and cut off, so the band rule (≥ 3 hard stops) does not decide it.
    // Each channel judged on its own (in one stereo source the two mirror each other, which decides them: below).
    const x = legatoChords(9);
    const [fwd] = (await detectReversedChannels(new MemorySource([x], FS))).channels;
    const [rev] = (await detectReversedChannels(new MemorySource([flip(x)], FS))).channels;
    console.log(`[reversed] legato chords: forward ${fwd!.likely} (${fwd!.basis}, band skew ${fwd!.bandSkew?.toFixed(2)}, median ${fwd!.bandMedian?.toFixed(2)}), reversed ${rev!.likely} (${rev!.basis}, band skew ${rev!.bandSkew?.toFixed(2)}, median ${rev!.bandMedian?.toFixed(2)})`);
    expect(rev!.bandSkew!).toBeGreaterThan(0.45);
    expect(rev!.bandMedian!).toBeGreaterThan(0.5);
    expect(rev!.bandsAgreeing).toBeGreaterThanOrEqual(0.9);
    expect(fwd!.bandSkew!).toBeLessThan(0);
    expect(rev!.abruptStops).toBeLessThan(3);
    expect(rev!.likely).toBe(null);
    expect(fwd!.likely).not.toBe(true);
    // Source: construction — the same samples as the two channels of one source: channel 2 is
    // channel 1 read backwards, so their envelopes mirror each other, and of the two it is the one
    // that leans reversed.
    const pair = (await detectReversedChannels(new MemorySource([x, flip(x)], FS))).channels;
    expect(pair.map((c) => [c.likely, c.basis])).toEqual([[false, 'mirrors-channel'], [true, 'mirrors-channel']]);
  });
});
