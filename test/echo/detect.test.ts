/**
 * Confidence calibration and print-through.
 *  - Material with no echo added must give `present: false` (confidence < 0.3) for the reflection
 *    and for print-through: several voice-like clips, white noise, a steady harmonic tone, digital
 *    silence, and the demo recording's clean source.
 *  - Print-through: a copy 40 dB down, 1.5 s before (and, separately, after) the loud passages is
 *    found within ±1 ms and ±2 dB, and `unecho` removes it by ≥ 20 dB.
 */
import { describe, expect, it } from 'vitest';
import { synthesizeDemo } from '../../assets/demo/synth.ts';
import { analyseEcho, confidenceFromZ } from '../../dsp/echo/detect.ts';
import { unecho } from '../../dsp/ops/unecho.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { collectBlocks, MemorySource } from '../../dsp/source.ts';
import { addEchoes } from '../helpers/delay.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';
import { voiceLike } from '../helpers/voice.ts';
import { residualRatioDb } from './util.ts';

const fs = 48000;

describe('no echo added: nothing reported', () => {
  const clips: Array<[string, () => Float64Array[]]> = [
    ...[1, 2, 3, 4].map((seed): [string, () => Float64Array[]] => [`voice-like clip, seed ${seed}`, () => [voiceLike({ sampleRateHz: fs, seconds: 10, seed }).x]]),
    [
      'white noise',
      () => {
        const g = gaussian(seededRng(99));
        return [Float64Array.from({ length: 5 * fs }, () => 0.1 * g())];
      },
    ],
    [
      'a steady harmonic tone (a periodic source: its cepstrum has rahmonics too)',
      () => [Float64Array.from({ length: 5 * fs }, (_, i) => [1, 2, 3, 4, 5, 6].reduce((a, k) => a + (0.2 / k) * Math.sin((2 * Math.PI * 220 * k * i) / fs), 0))],
    ],
  ];
  for (const [name, make] of clips) {
    it(name, async () => {
      // Source: no echo in the material by construction; the calibration target (< 0.3).
      const r = await analyseEcho(new MemorySource(make(), fs));
      expect(r.reflection.present).toBe(false);
      expect(r.reflection.confidence).toBeLessThan(0.3);
      expect(r.printThrough.present).toBe(false);
      expect(r.printThrough.confidence).toBeLessThan(0.3);
    });
  }

  it('digital silence: nothing measured, no crash', async () => {
    const r = await analyseEcho(new MemorySource([new Float64Array(3 * fs)], fs));
    expect(r.reflection.present).toBe(false);
    expect(r.printThrough.present).toBe(false);
  });

  it("the demo recording's clean source (stereo, hum, line-up tone, hiss; no reflection)", async () => {
    // Source: assets/demo/synth.ts with withReflection: false — the programme without the desk echo.
    const { channels } = synthesizeDemo({ withReflection: false });
    const r = await analyseEcho(new MemorySource(channels, fs));
    expect(r.reflection.present).toBe(false);
    expect(r.reflection.confidence).toBeLessThan(0.3);
    expect(r.printThrough.present).toBe(false);
  }, 60_000);

  it('maps the detection score to confidence as documented', () => {
    // Source: the logistic 1/(1 + e^{−(z − 8.5)/0.5}) in dsp/echo/detect.ts (exact values).
    expect(confidenceFromZ(8.5)).toBeCloseTo(0.5, 12);
    expect(confidenceFromZ(7)).toBeCloseTo(1 / (1 + Math.exp(3)), 12);
  });
});

describe('print-through', () => {
  const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 21 });
  for (const [what, delaySeconds] of [
    ['pre-echo 1.5 s before', -1.5],
    ['post-echo 1.5 s after', 1.5],
  ] as const) {
    it(`finds a ${what} loud passages at −40 dB (±1 ms, ±2 dB) and unecho removes it by ≥ 20 dB`, async () => {
      // Source: the print-through case; y = x + g·x(t − τ) with τ = ∓1.5 s and
      // g = 10^(−40/20) (contract sign: negative delay = before), made by the DFT shift theorem.
      const g = Math.pow(10, -40 / 20);
      const y = addEchoes(x, [{ delaySamples: delaySeconds * fs, gain: g }]);
      const source = new MemorySource([y], fs);
      const r = await analyseEcho(source);
      expect(r.printThrough.present).toBe(true);
      expect(r.printThrough.confidence).toBeGreaterThan(0.8);
      expect(Math.abs(r.printThrough.delaySeconds! - delaySeconds)).toBeLessThanOrEqual(0.001);
      expect(Math.abs(r.printThrough.levelDb! - -40)).toBeLessThanOrEqual(2);
      expect(r.reflection.present).toBe(false);

      const rendering = await unecho.prepare(source, {}, silentContext);
      const [out] = await collectBlocks(rendering.blocks, 1);
      expect(rendering.resolved.delaySeconds).toBeCloseTo(delaySeconds, 3);
      // Source: the target, ‖out − x‖/‖y − x‖ ≤ −20 dB over the whole clip.
      const left = residualRatioDb(out!, y, x);
      console.info(
        `print-through ${what}: delay error ${((r.printThrough.delaySeconds! - delaySeconds) * 1e3).toFixed(4)} ms, ` +
          `level ${r.printThrough.levelDb!.toFixed(2)} dB (true −40), confidence ${r.printThrough.confidence.toFixed(3)}, ` +
          `after unecho ${left.toFixed(1)} dB`,
      );
      expect(left).toBeLessThanOrEqual(-20);
    }, 60_000);
  }
});

describe('hiss added after the reflection', () => {
  // Source: truth by construction — y = (x + g·x(t − τ)) + n, the echo made by the DFT shift
  // theorem on a voice whose own noise is 70 dB down, then white hiss 50 dB under the voice's RMS
  // that carries no echo (tape hiss is added after the room; common practice). The floor check
  // must see that the hiss does not share the echo and measure the voice's reflection.
  const { x, voice } = voiceLike({ sampleRateHz: fs, seconds: 20, seed: 5, noiseDb: -70 });
  let rms = 0;
  for (const v of voice) rms += v * v;
  rms = Math.sqrt(rms / voice.length);
  for (const [tauMs, g] of [[23.4, 0.6], [95.05, 0.1], [310, 0.3]] as const) {
    it(`τ = ${tauMs} ms, g = ${g}: delay within 0.05 sample, gain within 0.02`, async () => {
      const d = (tauMs * fs) / 1000;
      const y = addEchoes(x, [{ delaySamples: d, gain: g }]);
      const hiss = gaussian(seededRng(99));
      const level = rms * Math.pow(10, -50 / 20);
      for (let i = 0; i < y.length; i++) y[i] = y[i]! + level * hiss();
      const r = (await analyseEcho(new MemorySource([y], fs))).reflection;
      expect(r.present).toBe(true);
      expect(Math.abs(r.delaySeconds! * fs - d)).toBeLessThanOrEqual(0.05);
      expect(Math.abs(r.gain! - g)).toBeLessThanOrEqual(0.02);
    }, 60_000);
  }
});

describe('print-through at the ends of its range', () => {
  // Source: the search range (copies 0.3–4 s away, down to −55 dB); y = x + g·x(t − τ)
  // made by the DFT shift theorem. 30 s of voice with a quiet floor (−60 dB, a clean transfer):
  // a −55 dB copy is then above the floor in the pauses, as print-through is heard in practice.
  const { x } = voiceLike({ sampleRateHz: fs, seconds: 30, seed: 21, noiseDb: -60 });
  for (const delaySeconds of [-0.4, -3.5, 2.2]) {
    it(`finds a −55 dB copy ${Math.abs(delaySeconds)} s ${delaySeconds < 0 ? 'before' : 'after'} (±1 ms, ±2 dB)`, async () => {
      const y = addEchoes(x, [{ delaySamples: delaySeconds * fs, gain: Math.pow(10, -55 / 20) }]);
      const r = await analyseEcho(new MemorySource([y], fs));
      expect(r.printThrough.present).toBe(true);
      expect(Math.abs(r.printThrough.delaySeconds! - delaySeconds)).toBeLessThanOrEqual(0.001);
      expect(Math.abs(r.printThrough.levelDb! - -55)).toBeLessThanOrEqual(2);
      expect(r.reflection.present).toBe(false);
    }, 60_000);
  }
});

describe('frequency-dependent reflection', () => {
  it('reports a short filter when one gain does not fit (a lowpass reflection) and cancels with it', async () => {
    // Source: y = x + Σ h_L·x(t − L) with h = (0.15, 0.3, 0.15) at 23.4 ms ± 1 sample — a reflection
    // whose response 0.3 + 0.3·cos ω falls to zero at Nyquist; made by the DFT shift theorem.
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 7 });
    const c = 0.0234 * fs;
    const y = addEchoes(x, [
      { delaySamples: c - 1, gain: 0.15 },
      { delaySamples: c, gain: 0.3 },
      { delaySamples: c + 1, gain: 0.15 },
    ]);
    const source = new MemorySource([y], fs);
    const r = await analyseEcho(source);
    expect(r.reflection.present).toBe(true);
    expect(r.reflection.filter).not.toBeNull();
    const rendering = await unecho.prepare(source, {}, silentContext);
    const [out] = await collectBlocks(rendering.blocks, 1);
    const left = residualRatioDb(out!, y, x);
    console.info(`lowpass reflection: ${r.reflection.filter!.taps.length}-tap filter, echo left after unecho ${left.toFixed(1)} dB`);
    expect(left).toBeLessThanOrEqual(-30);
  }, 60_000);

  it('keeps the single gain for a plain reflection', async () => {
    const { x } = voiceLike({ sampleRateHz: fs, seconds: 10, seed: 7 });
    const r = await analyseEcho(new MemorySource([addEchoes(x, [{ delaySamples: 0.0234 * fs, gain: 0.6 }])], fs));
    expect(r.reflection.filter).toBeNull();
  });
});

describe('demo reel', () => {
  it('the demo reel: the desk reflection is found though hiss and hum were added after it', async () => {
    // Source: the demo's true parameters (assets/demo/synth.ts: τ = 12.4 ms recorded ÷ 1.0293,
    // g = 0.42 on the voice only; hiss and hum carry no echo). The voice's steady, slowly
    // swinging pitch puts its second rahmonic (≈ 2/163 Hz = 12.3 ms at the lowest pitch) beside
    // the reflection, so the gain is allowed 0.03 here, the delay 0.1 sample; the reflection is
    // a single gain, so no filter may be reported (hiss left in would make it look coloured).
    const { channels, parameters } = synthesizeDemo({ withReflection: true });
    const r = await analyseEcho(new MemorySource(channels, fs));
    expect(r.reflection.present).toBe(true);
    expect(Math.abs(r.reflection.delaySeconds! - parameters.echo.delaySeconds) * fs).toBeLessThan(0.1);
    expect(Math.abs(r.reflection.gain! - parameters.echo.gain)).toBeLessThan(0.03);
    expect(r.reflection.filter).toBeNull();
    console.info(`demo reel: τ ${(r.reflection.delaySeconds! * 1e3).toFixed(4)} ms (true ${(parameters.echo.delaySeconds * 1e3).toFixed(4)}), g ${r.reflection.gain!.toFixed(3)} (true ${parameters.echo.gain})`);

    // Cancelled with what was measured, the programme's reflection is gone; the hiss, which had
    // none, now carries the inverse one (1/(1 + g·z^−τ) = 1 − g·z^−τ + …: gain ≈ −g in the floor;
    // exact series, from memory). That must not be reported as a reflection of the programme.
    const source = new MemorySource(channels, fs);
    const rendering = await unecho.prepare(source, { delaySeconds: r.reflection.delaySeconds!, gain: r.reflection.gain! }, silentContext);
    const after = await analyseEcho(new MemorySource(await collectBlocks(rendering.blocks, 2), fs));
    expect(after.reflection.present).toBe(false);
    expect(after.reflection.floorGain!).toBeLessThan(-0.2);
    console.info(`demo reel after cancelling: present ${after.reflection.present}, programme g ${after.reflection.gain?.toFixed(4)}, floor g ${after.reflection.floorGain?.toFixed(3)}`);
  }, 60_000);
});
