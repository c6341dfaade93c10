/**
 * Finds the test-tone segment of a recording: short probes (≈21–43 ms, Hann) of the channels'
 * average, spaced ≈0.1 s apart (further apart in long files, at most 8000 probes), are tested for
 * one dominant spectral line
 * near the nominal tone (within ±20 %, so an off-speed transfer is still found): at least 80 % of
 * the probe's power within ±3 bins of the strongest bin, and louder than −50 dBFS. The longest run
 * of consecutive tonal probes at a steady frequency (±1 % probe to probe) is the segment; its ends
 * are trimmed by 0.25 s to skip the tone's start and stop. The channel to demodulate is the one
 * with the stronger tone in the middle of the segment.
 */
import { powerToDb } from '../units.ts';
import type { AudioSource } from '../source.ts';
import type { OpContext } from '../context.ts';
import { CancelledError, NotFoundError } from '../errors.ts';
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/windows.ts';

export interface ToneSegment {
  startFrame: number;
  endFrame: number;
  /** Frequency estimate from the probes, Hz. */
  frequencyHz: number;
  /** 0-based channel where the tone is strongest. */
  channel: number;
  levelDbfs: number;
}

export interface LocateOptions {
  /** Search ± this fraction around the nominal tone (default 0.2). */
  searchFraction?: number;
  /** Shortest segment accepted, seconds (default 1). */
  minSeconds?: number;
  /** Longest segment analysed, seconds (default 300; longer tones are cut to their first 300 s). */
  maxSeconds?: number;
}

const TONAL_FRACTION = 0.8;
const MIN_LEVEL_DBFS = -50;
const MAX_PROBES = 8000;
const TRIM_SECONDS = 0.25;

export async function locateTone(source: AudioSource, toneHz: number, options: LocateOptions, ctx: OpContext): Promise<ToneSegment> {
  const fs = source.sampleRateHz;
  const search = options.searchFraction ?? 0.2;
  const minSeconds = options.minSeconds ?? 1;
  const maxSeconds = options.maxSeconds ?? 300;
  let n = 512;
  while (n < 0.02 * fs) n *= 2;
  if (source.frames < n) throw new NotFoundError(`the file is too short to hold a ${toneHz} Hz test tone`);
  const hop = Math.max(Math.round(0.1 * fs), Math.ceil(source.frames / MAX_PROBES));
  const plan = new FftPlan(n);
  const win = makeWindow('hann', n);
  let sw2 = 0;
  for (const v of win) sw2 += v * v;
  const frame = new Float64Array(n);
  const spec = plan.createHalfSpectrum();
  const kLo = Math.max(2, Math.floor(((toneHz * (1 - search)) * n) / fs));
  const kHi = Math.min(n / 2 - 4, Math.ceil(((toneHz * (1 + search)) * n) / fs));
  if (kHi <= kLo) throw new NotFoundError(`a ${toneHz} Hz tone cannot be carried at ${fs} Hz`);

  interface Probe { start: number; hz: number; levelDbfs: number }
  /** Tone in one frame of samples: frequency and level, or null when the frame is not tonal. */
  const analyse = (x: Float64Array): Probe | null => {
    for (let i = 0; i < n; i++) frame[i] = x[i]! * win[i]!;
    plan.realForward(frame, spec);
    let total = 0, kp = kLo, pk = -1;
    for (let k = 1; k <= n / 2; k++) {
      const pw = spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2;
      total += pw;
      if (k >= kLo && k <= kHi && pw > pk) { pk = pw; kp = k; }
    }
    let tone = 0;
    for (let k = kp - 3; k <= kp + 3; k++) tone += spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2;
    const levelDbfs = powerToDb(Math.max((4 * tone) / (n * sw2), 1e-30));
    if (!(total > 0 && tone / total >= TONAL_FRACTION && levelDbfs > MIN_LEVEL_DBFS)) return null;
    // Parabolic interpolation of the log magnitude around the peak bin.
    const lm = (k: number) => 0.5 * Math.log(spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2 + 1e-300);
    const a = lm(kp - 1), b = lm(kp), g = lm(kp + 1);
    const den = a - 2 * b + g;
    const delta = den < 0 ? (0.5 * (a - g)) / den : 0;
    return { start: 0, hz: ((kp + delta) * fs) / n, levelDbfs };
  };
  const read = async (start: number): Promise<Float64Array[]> => {
    const out = Array.from({ length: source.channelCount }, () => new Float64Array(n));
    let at = 0;
    for await (const block of source.blocks({ startFrame: start, endFrame: start + n, blockFrames: n })) {
      block.forEach((c, i) => out[i]!.set(c, at));
      at += block[0]!.length;
    }
    return out;
  };

  const hits: (Probe | null)[] = [];
  const probes = Math.floor((source.frames - n) / hop) + 1;
  const mix = new Float64Array(n);
  for (let p = 0; p < probes; p++) {
    if (ctx.signal?.aborted) throw new CancelledError('flutter cancelled');
    const start = p * hop;
    const chans = await read(start);
    mix.fill(0);
    for (const c of chans) for (let i = 0; i < n; i++) mix[i]! += c[i]! / chans.length;
    const hit = analyse(mix);
    hits.push(hit && { ...hit, start });
    ctx.progress((0.5 * (p + 1)) / probes);
  }

  // Longest run of tonal probes at a steady frequency.
  let bestRun: [number, number] | null = null;
  for (let p = 0; p < hits.length; ) {
    if (!hits[p]) {
      p++;
      continue;
    }
    let q = p + 1;
    while (q < hits.length && hits[q] && Math.abs(hits[q]!.hz - hits[q - 1]!.hz) < 0.01 * hits[q - 1]!.hz) q++;
    if (!bestRun || q - p > bestRun[1] - bestRun[0]) bestRun = [p, q];
    p = q;
  }
  if (!bestRun) throw new NotFoundError(`no steady test tone near ${toneHz} Hz was found`);
  const run = hits.slice(bestRun[0], bestRun[1]) as Probe[];
  let startFrame = run[0]!.start;
  let endFrame = run[run.length - 1]!.start + n;
  const trim = Math.min(Math.round(TRIM_SECONDS * fs), Math.floor((endFrame - startFrame) * 0.1));
  startFrame += trim;
  endFrame -= trim;
  if ((endFrame - startFrame) / fs < minSeconds) {
    throw new NotFoundError(`a ${toneHz} Hz tone was found but lasts only ${((endFrame - startFrame) / fs).toFixed(1)} s (at least ${minSeconds} s needed)`);
  }
  endFrame = Math.min(endFrame, startFrame + Math.round(maxSeconds * fs));
  const freqs = run.map((h) => h.hz).sort((a, b) => a - b);
  // Demodulate the channel where the tone is strongest, judged in the middle of the segment.
  const middle = await read(Math.max(0, Math.floor((startFrame + endFrame - n) / 2)));
  let channel = 0, best = -Infinity;
  middle.forEach((x, c) => {
    const h = analyse(x);
    if (h && h.levelDbfs > best) {
      best = h.levelDbfs;
      channel = c;
    }
  });
  const levels = run.map((h) => h.levelDbfs).sort((a, b) => a - b);
  return {
    startFrame,
    endFrame,
    frequencyHz: freqs[Math.floor(freqs.length / 2)]!,
    channel,
    levelDbfs: levels[Math.floor(levels.length / 2)]!,
  };
}
