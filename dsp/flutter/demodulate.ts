/**
 * FM demodulation of a test tone: the tone's instantaneous frequency as a track at about 4 kHz.
 *
 * Method (complex baseband, common practice for frequency discriminators):
 *  1. mix down: z[n] = x[n]·e^{−j2π f_c n/fs} with f_c the tone's approximate frequency (the phasor is
 *     advanced by a rotation per sample and re-anchored exactly at each block);
 *  2. low-pass and decimate by D = ⌊fs/4000⌋ with one Kaiser-windowed-sinc FIR (pass 600 Hz, stop
 *     1600 Hz, 90 dB), computed only at the kept samples; this removes the image at −2f_c, the
 *     tone's harmonics and most programme or hum around it;
 *  3. instantaneous frequency from the phase step between consecutive outputs:
 *     f[m] = f_c + arg(y[m]·y*[m−1])·fs_d/(2π). The first difference averages over 1/fs_d, a
 *     sinc(f_m/fs_d) response to the modulation (−0.04 dB at 200 Hz): negligible.
 * Linear-phase FIR: the track is delayed by (L−1)/2 input samples, which `startSeconds` accounts for.
 */
import type { AudioSource } from '../source.ts';
import type { OpContext } from '../context.ts';
import { CancelledError } from '../errors.ts';
import { kaiserLowpass } from '../core/kaiser-sinc.ts';

export const TARGET_TRACK_RATE_HZ = 4000;
const PASS_HZ = 600;
const STOP_HZ = 1600;
const STOP_DB = 90;

export interface FrequencyTrack {
  /** Rate of the track, Hz (fs / D). */
  sampleRateHz: number;
  /** Instantaneous frequency of the tone, Hz. */
  frequencyHz: Float64Array;
  /** Time of frequencyHz[0] in the source, seconds. */
  startSeconds: number;
}

export async function demodulateTone(
  source: AudioSource,
  startFrame: number,
  endFrame: number,
  centreHz: number,
  ctx: OpContext,
  channel = 0,
): Promise<FrequencyTrack> {
  const fs = source.sampleRateHz;
  const d = Math.max(1, Math.floor(fs / TARGET_TRACK_RATE_HZ));
  const fsd = fs / d;
  const h = kaiserLowpass(fs, PASS_HZ, Math.min(STOP_HZ, fsd - PASS_HZ), STOP_DB);
  const taps = h.length;
  const carry = taps - 1;
  const w = (2 * Math.PI * centreHz) / fs;
  const rotC = Math.cos(w), rotS = -Math.sin(w);

  let workRe = new Float64Array(0), workIm = new Float64Array(0);
  const carryRe = new Float64Array(carry), carryIm = new Float64Array(carry);
  const expected = Math.ceil((endFrame - startFrame) / d) + 2;
  let outRe = new Float64Array(expected), outIm = new Float64Array(expected);
  let outN = 0;
  /** Absolute input position of the newest sample of the next output. */
  let nextNewest = startFrame + carry;
  let pos = startFrame; // absolute position of the next input sample

  for await (const block of source.blocks({ startFrame, endFrame })) {
    if (ctx.signal?.aborted) throw new CancelledError('flutter cancelled');
    const x = block[channel]!;
    const len = carry + x.length;
    if (workRe.length < len) {
      workRe = new Float64Array(len + 4096);
      workIm = new Float64Array(len + 4096);
    }
    workRe.set(carryRe, 0);
    workIm.set(carryIm, 0);
    // Mix down; anchor the phasor exactly at the block start.
    const cycles = (centreHz * pos) / fs;
    const ang = -2 * Math.PI * (cycles - Math.floor(cycles));
    let pr = Math.cos(ang), pi = Math.sin(ang);
    for (let i = 0; i < x.length; i++) {
      const v = x[i]!;
      workRe[carry + i] = v * pr;
      workIm[carry + i] = v * pi;
      const nr = pr * rotC - pi * rotS;
      pi = pr * rotS + pi * rotC;
      pr = nr;
    }
    // Work index j holds absolute position pos − carry + j.
    const base = pos - carry;
    const lastNewest = pos + x.length - 1;
    while (nextNewest <= lastNewest) {
      const j = nextNewest - base; // newest sample index in work
      let sr = 0, si = 0;
      const first = j - taps + 1;
      for (let k = 0; k < taps; k++) {
        const hk = h[k]!;
        sr += hk * workRe[first + k]!;
        si += hk * workIm[first + k]!;
      }
      if (outN === outRe.length) {
        const grow = (a: Float64Array) => { const b = new Float64Array(a.length * 2); b.set(a); return b; };
        outRe = grow(outRe);
        outIm = grow(outIm);
      }
      outRe[outN] = sr;
      outIm[outN] = si;
      outN++;
      nextNewest += d;
    }
    carryRe.set(workRe.subarray(len - carry, len));
    carryIm.set(workIm.subarray(len - carry, len));
    pos += x.length;
    ctx.progress((pos - startFrame) / Math.max(1, endFrame - startFrame));
  }

  const n = Math.max(0, outN - 1);
  const f = new Float64Array(n);
  const scale = fsd / (2 * Math.PI);
  for (let m = 1; m <= n; m++) {
    const ar = outRe[m]!, ai = outIm[m]!, br = outRe[m - 1]!, bi = -outIm[m - 1]!;
    f[m - 1] = centreHz + Math.atan2(ar * bi + ai * br, ar * br - ai * bi) * scale;
  }
  // Output m has its newest input at startFrame + (L−1) + m·D, so its centre at startFrame + (L−1)/2 + m·D;
  // the frequency between outputs m−1 and m belongs half a step before output m.
  const startSeconds = (startFrame + (taps - 1) / 2 + d / 2) / fs;
  return { sampleRateHz: fsd, frequencyHz: f, startSeconds };
}
