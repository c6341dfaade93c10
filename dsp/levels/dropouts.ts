/**
 * Dropouts: sudden level drops of 20 dB or more, lasting 5–500 ms, in otherwise steady programme
 * (tape losing contact with the head, a damaged splice, a flaking coating).
 *
 * Input is a level track of one channel: mean square per frame of about 1 ms. The detector scans it
 * once and, at a frame more than `depthDb` below the reference level, asks four questions:
 *  - reference: the mean power of the 200 ms before (ending 3 frames before the drop) is above
 *    `floorDbfs` (not in a pause) and steady: each 50 ms quarter of that window is within
 *    `steadyDb` of the whole window;
 *  - sudden: one of the 3 frames before the drop is within 6 dB of the reference;
 *  - short: the level comes back above reference − (depthDb − 6 dB) within 500 ms (else it is a
 *    pause or an edit, not a dropout), and stayed below for at least 5 ms;
 *  - recovered: the 200 ms after (from 3 frames after the recovery) is within `steadyDb` of the
 *    reference.
 * Duration runs from the first frame below the threshold to the recovery frame, so it is good to
 * about one frame. Depth is the reference minus the mean power of the frames below the threshold.
 * This is our own rule (common practice in transfer QC has no single published detector).
 */
import { powerToDb } from '../units.ts';

export interface DropoutOptions {
  /** Frame length of the level track, seconds (about 0.001). */
  frameSeconds: number;
  /** Minimum drop below the reference, dB (default 20). */
  depthDb?: number;
  minSeconds?: number;
  maxSeconds?: number;
  /** References quieter than this are treated as pauses, not programme (default −60 dBFS). */
  floorDbfs?: number;
  /** Allowed wander of the reference and of the level after the dropout (default 6 dB). */
  steadyDb?: number;
}

export interface Dropout {
  startSeconds: number;
  durationSeconds: number;
  depthDb: number;
}

const PRE_MS = 200;
const QUARTERS = 4;
const GUARD_FRAMES = 3;
const POST_MS = 200;

/** Finds dropouts in one channel's level track (`power[k]` = mean square of frame k). */
export function findDropouts(power: ArrayLike<number>, options: DropoutOptions): Dropout[] {
  const fr = options.frameSeconds;
  const depthDb = options.depthDb ?? 20;
  const minFrames = Math.max(1, Math.round((options.minSeconds ?? 0.005) / fr));
  const maxFrames = Math.round((options.maxSeconds ?? 0.5) / fr);
  const floor = Math.pow(10, (options.floorDbfs ?? -60) / 10);
  const steady = Math.pow(10, (options.steadyDb ?? 6) / 10);
  const drop = Math.pow(10, -depthDb / 10);
  const recover = Math.pow(10, -(depthDb - 6) / 10);
  const near = Math.pow(10, -6 / 10);
  const pre = Math.max(QUARTERS, Math.round(PRE_MS / 1000 / fr));
  const quarter = Math.floor(pre / QUARTERS);
  const post = Math.max(1, Math.round(POST_MS / 1000 / fr));
  const n = power.length;
  const out: Dropout[] = [];

  const mean = (a: number, b: number): number => {
    let s = 0;
    for (let i = a; i < b; i++) s += power[i]!;
    return s / Math.max(1, b - a);
  };

  // Running sum of the pre-window [k − GUARD − pre, k − GUARD), recomputed exactly now and then.
  let k = pre + GUARD_FRAMES;
  let preSum = k < n ? mean(k - GUARD_FRAMES - pre, k - GUARD_FRAMES) * pre : 0;
  let sinceExact = 0;
  while (k < n) {
    const ref = preSum / pre;
    const v = power[k]!;
    if (ref > floor && v < ref * drop) {
      const hit = examine(k, ref);
      if (hit !== null) {
        out.push(hit.dropout);
        k = hit.resume;
        if (k < n) preSum = mean(k - GUARD_FRAMES - pre, k - GUARD_FRAMES) * pre;
        sinceExact = 0;
        continue;
      }
    }
    // Slide the window by one frame.
    k++;
    if (k >= n) break;
    if (++sinceExact >= 4096) {
      preSum = mean(k - GUARD_FRAMES - pre, k - GUARD_FRAMES) * pre;
      sinceExact = 0;
    } else {
      preSum += power[k - GUARD_FRAMES - 1]! - power[k - GUARD_FRAMES - pre - 1]!;
    }
  }
  return out;

  /** Checks a candidate starting at frame `s`; returns the dropout and where to resume, or null. */
  function examine(s: number, ref: number): { dropout: Dropout; resume: number } | null {
    // Sudden: the level was near the reference just before.
    let sudden = false;
    for (let i = Math.max(0, s - GUARD_FRAMES); i < s; i++) if (power[i]! >= ref * near) sudden = true;
    if (!sudden) return null;
    // Steady reference: every quarter of the pre-window close to the whole.
    const p0 = s - GUARD_FRAMES - pre;
    for (let q = 0; q < QUARTERS; q++) {
      const m = mean(p0 + q * quarter, p0 + (q + 1) * quarter);
      if (m > ref * steady || m < ref / steady) return null;
    }
    // Recovery.
    let e = s;
    while (e < n && e - s <= maxFrames && power[e]! < ref * recover) e++;
    if (e - s > maxFrames || e >= n) return null;
    if (e - s < minFrames) return null;
    // Level after the dropout back to the reference.
    const a = e + GUARD_FRAMES, b = Math.min(n, e + GUARD_FRAMES + post);
    if (b - a < Math.min(post, 50)) return null;
    const after = mean(a, b);
    if (after > ref * steady || after < ref / steady) return null;
    let core = 0, coreN = 0;
    for (let i = s; i < e; i++) {
      if (power[i]! < ref * drop) {
        core += power[i]!;
        coreN++;
      }
    }
    const inside = core / coreN;
    const depth = inside > 0 ? powerToDb(ref / inside) : 200;
    return {
      dropout: { startSeconds: s * fr, durationSeconds: (e - s) * fr, depthDb: Math.min(200, depth) },
      resume: e,
    };
  }
}

/** A run of exact digital zeros in one channel (0-based channel, sample positions). */
export interface ZeroRun {
  channel: number;
  startFrame: number;
  frames: number;
  /** Largest |x| of the EDGE_SAMPLES samples before the run and of those after it. */
  edgeBefore: number;
  edgeAfter: number;
}

/** Samples either side of a zero run whose largest magnitude tells a cut from a fade. */
export const EDGE_SAMPLES = 8;
/** Most zero runs kept for examination (a file of scattered silence could hold millions). */
export const MAX_ZERO_RUNS = 100_000;
/** Shortest run of exact zeros examined (seconds): shorter runs happen in quiet 16-bit material. */
export const MIN_ZERO_RUN_SECONDS = 0.002;
/** Level either side of a zero run, measured over this long (seconds). */
const ZERO_EDGE_SECONDS = 0.005;
/** Either side must be within this much of the channel's programme level (dB). */
const ZERO_PROGRAMME_DB = 30;
/** And the two sides within this much of each other: the programme goes on across the gap. */
const ZERO_CONTINUITY_DB = 30;
/** The samples at each edge no more than this far under the RMS of the 5 ms beside them. */
const ZERO_EDGE_DB = 30;
/** Absolute floor for the level either side (mean square, −60 dBFS). */
const ZERO_FLOOR = 1e-6;
/** Longer runs of zeros are a gap in the programme (silence), not a dropout. */
const ZERO_MAX_SECONDS = 0.5;

/**
 * Runs of exact digital zeros inside programme: a transfer or editing fault (a lost buffer, a bad
 * sector), always worth a finding. Sound that stops and later starts again is not one: the run
 * counts only when the programme sounds right up to it and right after it — the 5 ms either side
 * within 30 dB of the channel's programme level (the median of its 1 ms frames above −70 dBFS)
 * and above −60 dBFS, the two sides within 30 dB of each other, the 8 samples at each edge
 * no more than 30 dB under the RMS beside them (cut, not faded), and the run at most 500 ms long. A note or
 * a drum hit dying away into digital silence and the next one starting from it fail these tests;
 * a longer stretch of zeros is a silence in the programme. Our own rule (common practice in transfer QC
 * has no single published detector). `power[c][k]` is the mean square of 1 ms frame k.
 */
export function zeroRunDropouts(runs: readonly ZeroRun[], power: readonly Float32Array[], frameSamples: number, sampleRateHz: number) {
  const out: { channel: number; startSeconds: number; durationSeconds: number; depthDb: number }[] = [];
  const edge = Math.max(1, Math.round((ZERO_EDGE_SECONDS * sampleRateHz) / frameSamples));
  const programme = power.map((p, c) => {
    if (!runs.some((r) => r.channel === c)) return 0;
    const loud = Float32Array.from(p).filter((v) => v > 1e-7).sort();
    return loud.length ? loud[Math.floor(loud.length / 2)]! : 0;
  });
  for (const r of runs) {
    if (r.frames > ZERO_MAX_SECONDS * sampleRateHz) continue;
    const p = power[r.channel]!;
    const first = Math.floor(r.startFrame / frameSamples); // frame holding the run's first zero
    const last = Math.floor((r.startFrame + r.frames - 1) / frameSamples);
    const mean = (a: number, b: number) => {
      if (a < 0 || b > p.length || b <= a) return 0;
      let s = 0;
      for (let i = a; i < b; i++) s += p[i]!;
      return s / (b - a);
    };
    const before = mean(first - edge, first);
    const after = mean(last + 1, last + 1 + edge);
    const ref = programme[r.channel]!;
    const floor = Math.max(ZERO_FLOOR, ref * 10 ** (-ZERO_PROGRAMME_DB / 10));
    if (before < floor || after < floor) continue;
    if (Math.abs(powerToDb(before / after)) > ZERO_CONTINUITY_DB) continue;
    // Cut, not faded: the samples right next to the run are of the size of the programme around
    // them (a sound that dies away into digital silence, or starts from it, passes through
    // values a few bits high; a waveform cut by a fault does not).
    const abrupt = 10 ** (-ZERO_EDGE_DB / 20);
    if (r.edgeBefore < Math.sqrt(before) * abrupt || r.edgeAfter < Math.sqrt(after) * abrupt) continue;
    out.push({ channel: r.channel, startSeconds: r.startFrame / sampleRateHz, durationSeconds: r.frames / sampleRateHz, depthDb: 200 });
  }
  return out;
}
