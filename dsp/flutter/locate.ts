/**
 * Finds the test-tone segment of a recording: short probes (≈43 ms, Hann) spaced ≈0.1 s apart
 * (further apart in long files, at most 20 000 probes) are tested for one dominant spectral line
 * near the nominal tone (within ±20 %, so an off-speed transfer is still found): at least 80 % of
 * the probe's power within ±3 bins of the strongest bin, and louder than −50 dBFS. The longest run
 * of consecutive tonal probes at a steady frequency (±1 % probe to probe) is the segment; its ends
 * are trimmed by 0.25 s to skip the tone's start and stop.
 */
import type { AudioSource } from '../source.ts';
import type { OpContext } from '../ops/types.ts';
import { CancelledError, NotFoundError } from '../errors.ts';
import { FftPlan } from '../core/fft.ts';
import { makeWindow } from '../core/window.ts';

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
const MAX_PROBES = 20000;
const TRIM_SECONDS = 0.25;

export async function locateTone(source: AudioSource, toneHz: number, options: LocateOptions, ctx: OpContext): Promise<ToneSegment> {
  const fs = source.sampleRateHz;
  const search = options.searchFraction ?? 0.2;
  const minSeconds = options.minSeconds ?? 1;
  const maxSeconds = options.maxSeconds ?? 300;
  let n = 512;
  while (n < 0.04 * fs) n *= 2;
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

  interface Probe { start: number; hz: number; channel: number; levelDbfs: number }
  const hits: (Probe | null)[] = [];
  const probes = Math.floor((source.frames - n) / hop) + 1;
  for (let p = 0; p < probes; p++) {
    if (ctx.signal?.aborted) throw new CancelledError('flutter cancelled');
    const start = p * hop;
    let best: Probe | null = null;
    let bestPower = 0;
    for await (const block of source.blocks({ startFrame: start, endFrame: start + n, blockFrames: n })) {
      for (let c = 0; c < block.length; c++) {
        const x = block[c]!;
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
        const amp2 = (4 * tone) / (n * sw2);
        const levelDbfs = 10 * Math.log10(Math.max(amp2, 1e-30));
        if (total > 0 && tone / total >= TONAL_FRACTION && levelDbfs > MIN_LEVEL_DBFS && tone > bestPower) {
          // Parabolic interpolation of the log magnitude around the peak bin.
          const lm = (k: number) => 0.5 * Math.log(spec[2 * k]! ** 2 + spec[2 * k + 1]! ** 2 + 1e-300);
          const a = lm(kp - 1), b = lm(kp), g = lm(kp + 1);
          const den = a - 2 * b + g;
          const delta = den < 0 ? (0.5 * (a - g)) / den : 0;
          bestPower = tone;
          best = { start, hz: ((kp + delta) * fs) / n, channel: c, levelDbfs };
        }
      }
    }
    hits.push(best);
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
  const channelVotes = new Map<number, number>();
  for (const h of run) channelVotes.set(h.channel, (channelVotes.get(h.channel) ?? 0) + 1);
  const channel = [...channelVotes.entries()].sort((a, b) => b[1] - a[1])[0]![0];
  const levels = run.map((h) => h.levelDbfs).sort((a, b) => a - b);
  return {
    startFrame,
    endFrame,
    frequencyHz: freqs[Math.floor(freqs.length / 2)]!,
    channel,
    levelDbfs: levels[Math.floor(levels.length / 2)]!,
  };
}
