/**
 * One streaming pass over a source for everything about levels: sample peak, true peak, RMS, DC
 * offset, clipping, BS.1770 loudness, runs of exact digital zeros, a 1 ms level track (kept compact:
 * one float per channel per millisecond) for dropouts, level dips and head/tail silence, and a sparse long-term spectrum for the
 * effective bandwidth.
 */
import { gainToDb, powerToDb } from '../units.ts';
import type { AudioSource } from '../source.ts';
import type { OpContext } from '../context.ts';
import { CancelledError } from '../errors.ts';
import { LoudnessMeter } from './loudness.ts';
import { TruePeakMeter } from './true-peak.ts';
import { EDGE_SAMPLES, MAX_ZERO_RUNS, MIN_ZERO_RUN_SECONDS, findDropouts, zeroRunDropouts, type ZeroRun } from './dropouts.ts';
import { announceBandwidthLevels, bandwidthSpectrum, compactSpectrum, effectiveBandwidthHz } from './spectrum.ts';

export interface LevelsOptions {
  /** Samples at or beyond this magnitude count as clipped (1 for float; the top code for integers). */
  clipLevel: number;
  /** A clipped run is at least this many consecutive clipped samples (default 3). */
  clipRunSamples?: number;
  /** Head/tail silence: 10 ms windows quieter than this on every channel (default −60 dBFS). */
  silenceThresholdDbfs?: number;
  /** Minimum dropout depth, dB (default 20). */
  dropoutDepthDb?: number;
  /** Points in the level envelope kept for plots (default 600). */
  envelopePoints?: number;
}

export interface LevelsChannel {
  channel: number;
  peakDbfs: number;
  truePeakDbtp: number;
  rmsDbfs: number;
  dcOffset: number;
  clippedSamples: number;
  clippedRunCount: number;
}

export interface DropoutReport {
  startSeconds: number;
  durationSeconds: number;
  /** Drop below the level around it, dB (200 for a run of exact digital zeros). */
  depthDb: number;
  /** 1-based channels where it was found. */
  channels: number[];
}

export interface ClippedRun {
  channel: number;
  startSeconds: number;
  samples: number;
}

export interface LevelsResult {
  channels: LevelsChannel[];
  /** Integrated loudness per ITU-R BS.1770-4, LUFS (null in JSON when nothing passes the gates). */
  loudnessLufs: number;
  maxMomentaryLufs: number;
  maxShortTermLufs: number;
  loudnessRangeLu: number;
  /** Highest true peak over all channels, dBTP. */
  truePeakDbtp: number;
  /** Runs of exact digital zeros inside programme (a transfer fault): see zeroRunDropouts. */
  dropouts: DropoutReport[];
  /**
   * Sudden level drops of `dropoutDepthDb` or more in steady programme (findDropouts): a tape
   * dropout, or a gap in the playing (a pause between notes, a stop consonant) — the level alone
   * cannot tell which, so these are listed for listening, not counted as faults.
   */
  levelDips: DropoutReport[];
  /** The first clipped runs (at most 100), in time order. */
  clippedRuns: ClippedRun[];
  silence: { headSeconds: number; tailSeconds: number; thresholdDbfs: number; allSilent: boolean };
  bandwidthHz: number;
  longTermSpectrum: { frequenciesHz: number[]; levelsDb: number[] };
  envelope: { timesSeconds: number[]; rmsDbfs: number[]; maxDbfs: number[] };
  durationSeconds: number;
}

const MAX_LISTED_RUNS = 100;
const round = (v: number, digits: number) => {
  const m = 10 ** digits;
  return Math.round(v * m) / m;
};

export async function analyzeLevels(source: AudioSource, options: LevelsOptions, ctx: OpContext): Promise<LevelsResult> {
  const fs = source.sampleRateHz;
  const nCh = source.channelCount;
  const total = source.frames;
  const clipLevel = options.clipLevel;
  const minRun = Math.max(1, Math.floor(options.clipRunSamples ?? 3));
  const silenceDb = options.silenceThresholdDbfs ?? -60;

  const peak = new Float64Array(nCh);
  const sum = new Float64Array(nCh);
  const sumSq = new Float64Array(nCh);
  const clipped = new Float64Array(nCh);
  const runCount = new Float64Array(nCh);
  const runLen = new Float64Array(nCh);
  const runStart = new Float64Array(nCh);
  const runs: ClippedRun[] = [];
  // Runs of exact digital zeros, per channel (start sample, length).
  const zeroLen = new Float64Array(nCh);
  const zeroStart = new Float64Array(nCh);
  const zeroRuns: ZeroRun[] = [];
  // Largest |x| of the last EDGE_SAMPLES samples (before a run starts) and of the first ones
  // after a run ends.
  const lastAbs = Array.from({ length: nCh }, () => new Float64Array(EDGE_SAMPLES));
  let ringAt = 0;
  const edgeBefore = new Float64Array(nCh);
  const pendingRun: (ZeroRun | null)[] = new Array(nCh).fill(null);
  const pendingLeft = new Float64Array(nCh);
  const minZero = Math.max(2, Math.round(MIN_ZERO_RUN_SECONDS * fs));

  const frameSamples = Math.max(1, Math.round(fs / 1000));
  const frameSeconds = frameSamples / fs;
  const nFrames = Math.ceil(total / frameSamples);
  const framePower = Array.from({ length: nCh }, () => new Float32Array(nFrames));
  const frameAcc = new Float64Array(nCh);
  let frameFill = 0;
  let frameIndex = 0;

  const loudness = new LoudnessMeter(fs, nCh, total);
  const truePeak = Array.from({ length: nCh }, () => new TruePeakMeter());
  const spectrum = bandwidthSpectrum(fs, nCh, total);
  // `spectrum` running over the same source takes this one (dsp/ops/spectrum.ts).
  const announced = announceBandwidthLevels(source);

  let pos = 0;
  try {
    for await (const block of source.blocks({ readOnly: true })) {
      if (ctx.signal?.aborted) throw new CancelledError('levels cancelled');
      const len = block[0]!.length;
      for (let c = 0; c < nCh; c++) {
        const x = block[c]!;
        let p = peak[c]!, s = 0, s2 = 0, k = 0;
        let rl = runLen[c]!;
        let zl = zeroLen[c]!;
        const la = lastAbs[c]!;
        for (let i = 0; i < len; i++) {
          const v = x[i]!;
          const a = v < 0 ? -v : v;
          if (a > p) p = a;
          if (a === 0) {
            if (zl === 0) {
              zeroStart[c] = pos + i;
              let m = 0;
              for (const v of la) if (v > m) m = v;
              edgeBefore[c] = m;
            }
            zl++;
          } else if (zl > 0) {
            if (zl >= minZero && zeroRuns.length < MAX_ZERO_RUNS && pendingRun[c] === null) {
              pendingRun[c] = { channel: c, startFrame: zeroStart[c]!, frames: zl, edgeBefore: edgeBefore[c]!, edgeAfter: 0 };
              pendingLeft[c] = EDGE_SAMPLES;
            }
            zl = 0;
          }
          const run = pendingRun[c];
          if (run !== null && zl === 0) {
            if (a > run.edgeAfter) run.edgeAfter = a;
            if (--pendingLeft[c]! === 0) {
              zeroRuns.push(run);
              pendingRun[c] = null;
            }
          }
          la[(ringAt + i) & (EDGE_SAMPLES - 1)] = a; // EDGE_SAMPLES is a power of two
          s += v;
          s2 += v * v;
          if (a >= clipLevel) {
            k++;
            if (rl === 0) runStart[c] = pos + i;
            rl++;
          } else if (rl > 0) {
            if (rl >= minRun) closeRun(c, rl);
            rl = 0;
          }
        }
        runLen[c] = rl;
        zeroLen[c] = zl;
        peak[c] = p;
        sum[c]! += s;
        sumSq[c]! += s2;
        clipped[c]! += k;
      }
      // 1 ms level track.
      let at = 0;
      while (at < len) {
        const take = Math.min(len - at, frameSamples - frameFill);
        for (let c = 0; c < nCh; c++) {
          const x = block[c]!;
          let e = 0;
          for (let i = at; i < at + take; i++) e += x[i]! * x[i]!;
          frameAcc[c]! += e;
        }
        frameFill += take;
        at += take;
        if (frameFill === frameSamples) closeFrame();
      }
      loudness.push(block);
      for (let c = 0; c < nCh; c++) truePeak[c]!.push(block[c]!);
      spectrum.push(block);
      pos += len;
      ringAt = (ringAt + len) & (EDGE_SAMPLES - 1);
      ctx.progress(pos / Math.max(1, total));
    }
  } catch (e) {
    announced.fail();
    throw e;
  }
  const levelsDb = spectrum.levelsDb();
  announced.done(levelsDb);
  for (let c = 0; c < nCh; c++) if (runLen[c]! >= minRun) closeRun(c, runLen[c]!);
  if (frameFill > 0) closeFrame();

  function closeRun(c: number, length: number) {
    runCount[c]!++;
    if (runs.length < MAX_LISTED_RUNS) runs.push({ channel: c + 1, startSeconds: round(runStart[c]! / fs, 6), samples: length });
  }
  function closeFrame() {
    for (let c = 0; c < nCh; c++) {
      framePower[c]![frameIndex] = frameAcc[c]! / frameFill;
      frameAcc[c] = 0;
    }
    frameIndex++;
    frameFill = 0;
  }

  const frames = Math.max(1, total);
  const tp = truePeak.map((m) => m.finish());
  const channels: LevelsChannel[] = [];
  for (let c = 0; c < nCh; c++) {
    channels.push({
      channel: c + 1,
      peakDbfs: gainToDb(peak[c]!),
      truePeakDbtp: gainToDb(tp[c]!),
      rmsDbfs: powerToDb(sumSq[c]! / frames),
      dcOffset: sum[c]! / frames,
      clippedSamples: clipped[c]!,
      clippedRunCount: runCount[c]!,
    });
  }
  runs.sort((a, b) => a.startSeconds - b.startSeconds || a.channel - b.channel);

  // Dropouts (runs of digital zeros inside programme) and level dips, per channel, each merged
  // where they overlap in time.
  const zeros: DropoutReport[] = zeroRunDropouts(zeroRuns, framePower.map((p) => p.subarray(0, frameIndex)), frameSamples, fs).map((d) => ({
    startSeconds: d.startSeconds,
    durationSeconds: d.durationSeconds,
    depthDb: d.depthDb,
    channels: [d.channel + 1],
  }));
  const dips: DropoutReport[] = [];
  for (let c = 0; c < nCh; c++) {
    for (const d of findDropouts(framePower[c]!.subarray(0, frameIndex), { frameSeconds, depthDb: options.dropoutDepthDb ?? 20 })) {
      const overlapsZeros = zeros.some((z) => z.channels.includes(c + 1) && z.startSeconds < d.startSeconds + d.durationSeconds && d.startSeconds < z.startSeconds + z.durationSeconds);
      if (!overlapsZeros) dips.push({ ...d, channels: [c + 1] });
    }
  }
  const dropouts = mergeOverlapping(zeros);
  const levelDips = mergeOverlapping(dips);

  const silence = headTailSilence(framePower, frameIndex, frameSeconds, silenceDb, total / fs);
  const l = loudness.result();
  return {
    channels,
    loudnessLufs: l.integratedLufs,
    maxMomentaryLufs: l.maxMomentaryLufs,
    maxShortTermLufs: l.maxShortTermLufs,
    loudnessRangeLu: l.loudnessRangeLu,
    truePeakDbtp: Math.max(...channels.map((c) => c.truePeakDbtp)),
    dropouts,
    levelDips,
    clippedRuns: runs,
    silence,
    bandwidthHz: levelsDb.length ? Math.round(effectiveBandwidthHz(levelsDb, fs)) : fs / 2,
    longTermSpectrum: compactSpectrum(levelsDb, fs),
    envelope: envelope(framePower, frameIndex, frameSeconds, options.envelopePoints ?? 600),
    durationSeconds: total / fs,
  };
}

/** Events of several channels merged where they overlap in time, rounded for reports. */
function mergeOverlapping(found: DropoutReport[]): DropoutReport[] {
  found.sort((a, b) => a.startSeconds - b.startSeconds);
  const out: DropoutReport[] = [];
  for (const d of found) {
    const last = out[out.length - 1];
    if (last && d.startSeconds <= last.startSeconds + last.durationSeconds) {
      const end = Math.max(last.startSeconds + last.durationSeconds, d.startSeconds + d.durationSeconds);
      last.durationSeconds = end - last.startSeconds;
      last.depthDb = Math.max(last.depthDb, d.depthDb);
      for (const ch of d.channels) if (!last.channels.includes(ch)) last.channels.push(ch);
    } else {
      out.push({ ...d, channels: [...d.channels] });
    }
  }
  for (const d of out) {
    d.startSeconds = round(d.startSeconds, 4);
    d.durationSeconds = round(d.durationSeconds, 4);
    d.depthDb = round(d.depthDb, 2);
  }
  return out;
}

/** Head and tail silence from the 1 ms track: 10 ms windows below the threshold on every channel. */
function headTailSilence(power: Float32Array[], n: number, frameSeconds: number, thresholdDbfs: number, durationSeconds: number) {
  const limit = Math.pow(10, thresholdDbfs / 10);
  const win = Math.max(1, Math.round(0.01 / frameSeconds));
  const loud = (k: number) => {
    const b = Math.min(n, k + win);
    for (const p of power) {
      let s = 0;
      for (let i = k; i < b; i++) s += p[i]!;
      if (s / (b - k) >= limit) return true;
    }
    return false;
  };
  let head = -1;
  for (let k = 0; k < n; k += win) if (loud(k)) { head = k; break; }
  if (head < 0) return { headSeconds: durationSeconds, tailSeconds: durationSeconds, thresholdDbfs, allSilent: true };
  let tailStart = n;
  for (let k = Math.floor((n - 1) / win) * win; k >= 0; k -= win) if (loud(k)) { tailStart = Math.min(n, k + win); break; }
  return {
    headSeconds: round(head * frameSeconds, 3),
    tailSeconds: round(Math.max(0, durationSeconds - tailStart * frameSeconds), 3),
    thresholdDbfs,
    allSilent: false,
  };
}

/** Level envelope for plots: per time bin, the mean power over channels and the loudest 1 ms frame. */
function envelope(power: Float32Array[], n: number, frameSeconds: number, points: number) {
  const bins = Math.max(1, Math.min(points, n));
  const timesSeconds: number[] = [], rmsDbfs: number[] = [], maxDbfs: number[] = [];
  for (let b = 0; b < bins; b++) {
    const a = Math.floor((b * n) / bins), e = Math.max(a + 1, Math.floor(((b + 1) * n) / bins));
    let s = 0, m = 0;
    for (const p of power) {
      for (let i = a; i < Math.min(e, n); i++) {
        s += p[i]!;
        if (p[i]! > m) m = p[i]!;
      }
    }
    const count = Math.max(1, (Math.min(e, n) - a) * power.length);
    timesSeconds.push(round(a * frameSeconds, 3));
    rmsDbfs.push(round(powerToDb(Math.max(s / count, 1e-15)), 1));
    maxDbfs.push(round(powerToDb(Math.max(m, 1e-15)), 1));
  }
  return { timesSeconds, rmsDbfs, maxDbfs };
}
