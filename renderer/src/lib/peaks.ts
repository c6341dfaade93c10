/**
 * Multi-resolution min/max caches for drawing long recordings. Level 0 holds one min/max pair
 * per 256 frames and channel, each further level merges 4 buckets of the one below, up to a
 * level small enough for the overview. A 1-hour 96 kHz stereo file needs ≈ 29 MB in all, so the
 * page draws any zoom level without touching the samples; only views closer than 256 frames per
 * pixel read samples.
 */
export const BASE_BUCKET_FRAMES = 256;
export const LEVEL_FACTOR = 4;

export interface PeakLevel {
  readonly bucketFrames: number;
  readonly buckets: number;
  /** Per channel. */
  readonly min: Float32Array[];
  readonly max: Float32Array[];
}

export interface PeakPyramid {
  readonly sampleRateHz: number;
  readonly channelCount: number;
  readonly frames: number;
  readonly levels: readonly PeakLevel[];
}

/** Builds level 0 block by block; `finish` derives the coarser levels. */
export class PeakBuilder {
  #min: Float32Array[];
  #max: Float32Array[];
  #frames = 0;
  constructor(readonly channelCount: number, framesHint: number, readonly sampleRateHz: number) {
    const n = Math.max(1, Math.ceil(framesHint / BASE_BUCKET_FRAMES));
    this.#min = Array.from({ length: channelCount }, () => new Float32Array(n).fill(Infinity));
    this.#max = Array.from({ length: channelCount }, () => new Float32Array(n).fill(-Infinity));
  }

  get frames(): number {
    return this.#frames;
  }

  push(block: readonly ArrayLike<number>[]): void {
    const len = block[0]?.length ?? 0;
    const needed = Math.ceil((this.#frames + len) / BASE_BUCKET_FRAMES);
    if (needed > this.#min[0]!.length) this.#grow(needed * 2);
    for (let c = 0; c < this.channelCount; c++) {
      const x = block[c]!;
      const mn = this.#min[c]!, mx = this.#max[c]!;
      let f = this.#frames;
      let i = 0;
      while (i < len) {
        const b = (f / BASE_BUCKET_FRAMES) | 0;
        const end = Math.min(len, i + (b + 1) * BASE_BUCKET_FRAMES - f);
        let lo = mn[b]!, hi = mx[b]!;
        for (; i < end; i++) {
          const v = x[i]!;
          if (v < lo) lo = v;
          if (v > hi) hi = v;
        }
        mn[b] = lo;
        mx[b] = hi;
        f = this.#frames + i;
      }
    }
    this.#frames += len;
  }

  /**
   * Fast path for interleaved 16-bit PCM straight from the file's bytes: min/max on the integers,
   * scaled once per bucket. About four times quicker than decoding first.
   */
  pushInterleavedInt16(v: Int16Array, frames: number): void {
    const n = this.channelCount;
    const needed = Math.ceil((this.#frames + frames) / BASE_BUCKET_FRAMES);
    if (needed > this.#min[0]!.length) this.#grow(needed * 2);
    const k = 1 / 32768;
    if (n === 2 && v.byteOffset % 4 === 0) {
      // Stereo: one 32-bit load per frame carries both channels.
      const w32 = new Int32Array(v.buffer, v.byteOffset, frames);
      const mnL = this.#min[0]!, mxL = this.#max[0]!, mnR = this.#min[1]!, mxR = this.#max[1]!;
      let i = 0;
      while (i < frames) {
        const f = this.#frames + i;
        const b = (f / BASE_BUCKET_FRAMES) | 0;
        const end = Math.min(frames, i + (b + 1) * BASE_BUCKET_FRAMES - f);
        let loL = 32767, hiL = -32768, loR = 32767, hiR = -32768;
        for (let p = i; p < end; p++) {
          const w = w32[p]!;
          const l = (w << 16) >> 16, r = w >> 16;
          if (l < loL) loL = l;
          if (l > hiL) hiL = l;
          if (r < loR) loR = r;
          if (r > hiR) hiR = r;
        }
        if (loL * k < mnL[b]!) mnL[b] = loL * k;
        if (hiL * k > mxL[b]!) mxL[b] = hiL * k;
        if (loR * k < mnR[b]!) mnR[b] = loR * k;
        if (hiR * k > mxR[b]!) mxR[b] = hiR * k;
        i = end;
      }
      this.#frames += frames;
      return;
    }
    for (let c = 0; c < n; c++) {
      const mn = this.#min[c]!, mx = this.#max[c]!;
      let i = 0;
      while (i < frames) {
        const f = this.#frames + i;
        const b = (f / BASE_BUCKET_FRAMES) | 0;
        const end = Math.min(frames, i + (b + 1) * BASE_BUCKET_FRAMES - f);
        let lo = 32767, hi = -32768;
        for (let p = i * n + c, e = end * n; p < e; p += n) {
          const x = v[p]!;
          if (x < lo) lo = x;
          if (x > hi) hi = x;
        }
        if (lo * k < mn[b]!) mn[b] = lo * k;
        if (hi * k > mx[b]!) mx[b] = hi * k;
        i = end;
      }
    }
    this.#frames += frames;
  }

  #grow(n: number): void {
    this.#min = this.#min.map((a) => { const b = new Float32Array(n).fill(Infinity); b.set(a); return b; });
    this.#max = this.#max.map((a) => { const b = new Float32Array(n).fill(-Infinity); b.set(a); return b; });
  }

  /** Level 0 only (one part of a file built in several workers). */
  level0(): PeakLevel {
    const buckets = Math.max(1, Math.ceil(this.#frames / BASE_BUCKET_FRAMES));
    return { bucketFrames: BASE_BUCKET_FRAMES, buckets, min: this.#min.map((a) => a.slice(0, buckets)), max: this.#max.map((a) => a.slice(0, buckets)) };
  }

  finish(): PeakPyramid {
    return pyramidFromParts([this.level0()], this.#frames, this.sampleRateHz);
  }
}

/**
 * Joins level-0 parts built over consecutive ranges (each but the last a whole number of
 * buckets long) and derives the coarser levels.
 */
export function pyramidFromParts(parts: readonly PeakLevel[], frames: number, sampleRateHz: number): PeakPyramid {
  const channelCount = parts[0]!.min.length;
  const buckets = parts.reduce((s, p) => s + p.buckets, 0);
  const join = (pick: (p: PeakLevel) => Float32Array[]) => Array.from({ length: channelCount }, (_, c) => {
    if (parts.length === 1) return pick(parts[0]!)[c]!;
    const out = new Float32Array(buckets);
    let at = 0;
    for (const p of parts) { out.set(pick(p)[c]!, at); at += p.buckets; }
    return out;
  });
  {
    const levels: PeakLevel[] = [{ bucketFrames: BASE_BUCKET_FRAMES, buckets, min: join((p) => p.min), max: join((p) => p.max) }];
    while (levels.at(-1)!.buckets > 512) {
      const prev = levels.at(-1)!;
      const n = Math.ceil(prev.buckets / LEVEL_FACTOR);
      const min = prev.min.map((src) => {
        const out = new Float32Array(n);
        for (let b = 0; b < n; b++) {
          let m = Infinity;
          for (let k = b * LEVEL_FACTOR, e = Math.min(prev.buckets, k + LEVEL_FACTOR); k < e; k++) if (src[k]! < m) m = src[k]!;
          out[b] = m;
        }
        return out;
      });
      const max = prev.max.map((src) => {
        const out = new Float32Array(n);
        for (let b = 0; b < n; b++) {
          let m = -Infinity;
          for (let k = b * LEVEL_FACTOR, e = Math.min(prev.buckets, k + LEVEL_FACTOR); k < e; k++) if (src[k]! > m) m = src[k]!;
          out[b] = m;
        }
        return out;
      });
      levels.push({ bucketFrames: prev.bucketFrames * LEVEL_FACTOR, buckets: n, min, max });
    }
    return { sampleRateHz, channelCount, frames, levels };
  }
}

/** The buffers of a pyramid, for transferring it between threads. */
export const pyramidBuffers = (p: PeakPyramid): ArrayBuffer[] =>
  p.levels.flatMap((l) => [...l.min, ...l.max].map((a) => a.buffer as ArrayBuffer));

/**
 * Min/max per drawing column from the coarsest level whose buckets are no wider than a column.
 * Returns false when columns are narrower than one base bucket (the caller draws samples instead).
 * Columns outside the recording get NaN.
 */
export function columnsFromPyramid(
  p: PeakPyramid, channel: number, startFrame: number, framesPerColumn: number,
  outMin: Float32Array, outMax: Float32Array,
): boolean {
  if (framesPerColumn < BASE_BUCKET_FRAMES) return false;
  let level = p.levels[0]!;
  for (const l of p.levels) if (l.bucketFrames <= framesPerColumn) level = l;
  const mn = level.min[channel]!, mx = level.max[channel]!;
  for (let x = 0; x < outMin.length; x++) {
    const f0 = startFrame + x * framesPerColumn;
    const f1 = f0 + framesPerColumn;
    if (f1 <= 0 || f0 >= p.frames) { outMin[x] = NaN; outMax[x] = NaN; continue; }
    const b0 = Math.max(0, Math.floor(f0 / level.bucketFrames));
    const b1 = Math.min(level.buckets, Math.max(b0 + 1, Math.ceil(f1 / level.bucketFrames)));
    let lo = Infinity, hi = -Infinity;
    for (let b = b0; b < b1; b++) {
      if (mn[b]! < lo) lo = mn[b]!;
      if (mx[b]! > hi) hi = mx[b]!;
    }
    outMin[x] = lo;
    outMax[x] = hi;
  }
  return true;
}
