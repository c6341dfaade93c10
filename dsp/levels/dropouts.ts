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
    const depth = inside > 0 ? 10 * Math.log10(ref / inside) : 200;
    return {
      dropout: { startSeconds: s * fr, durationSeconds: (e - s) * fr, depthDb: Math.min(200, depth) },
      resume: e,
    };
  }
}
