/**
 * WebAssembly SIMD (f64x2) kernel for polyphase interpolation by a factor D that is a multiple
 * of 4: the D outputs of each input position q are y[qD + r] = Σ_{i<S} h_r[i]·v[q − i], four
 * phases at a time (two v128 accumulators), the sum over i in increasing order from 0 for each
 * output — the same IEEE multiplies and adds in the same order as the TypeScript loop it stands in
 * for (dsp/stretch/low-band.ts `addTo`), so the numbers are identical (no fused multiply-add in
 * WebAssembly SIMD). Assembled at load time by ./wasm-assembler.ts; where WebAssembly SIMD is
 * missing `polyphaseWasm()` returns null and the caller keeps its own loop.
 *
 * Memory: one module instance with its own linear memory (only grows); callers copy v in, run
 * `interpolate` and read y out before the next call.
 */
import { assemble, F64, Fn, I32, instantiateStandalone, V128 } from './wasm-assembler.ts';

interface WasmMemory {
  readonly buffer: ArrayBuffer;
  grow(deltaPages: number): number;
}

interface Kernels {
  memory: WasmMemory;
  /**
   * For b < blocks and each group g < groups of four phases: dst[b·4G + 4g + j] =
   * Σ_{i<span} taps[(g·span + i)·4 + j]·src[b + span − 1 − i] (byte offsets; sums from i = 0).
   */
  interpolate(src: number, taps: number, dst: number, blocks: number, span: number, groups: number): void;
  /**
   * For m < count, with c = src + 16·(half + m·step) (two-channel frames of 16 bytes, interleaved):
   * dst[16m] = h[0]·x[c] + Σ_{i=1…half} h[i]·(x[c + 16i] + x[c − 16i]) per lane, h the doubles at
   * `taps` (the upper half h[L…2L] of a symmetric filter), sums from i = 1 up (byte offsets).
   */
  decimate2(src: number, taps: number, dst: number, count: number, half: number, step: number): void;
}

function interpolateFunction(): Fn {
  const f = new Fn([I32, I32, I32, I32, I32, I32]);
  const src = 0, taps = 1, dst = 2, blocks = 3, span = 4, groups = 5;
  const b = f.local(I32), g = f.local(I32), i = f.local(I32), tp = f.local(I32), sp = f.local(I32), out = f.local(I32);
  const acc01 = f.local(V128), acc23 = f.local(V128), x = f.local(V128), spanTop = f.local(I32);
  f.get(span).i32(1).sub().i32(8).mul().set(spanTop); // (span − 1)·8
  f.i32(0).set(b);
  f.get(dst).set(out);
  f.while(
    () => f.get(b).get(blocks).ltU(),
    () => {
      f.i32(0).set(g);
      f.get(taps).set(tp);
      f.while(
        () => f.get(g).get(groups).ltU(),
        () => {
          f.vconst(0, 0).set(acc01);
          f.vconst(0, 0).set(acc23);
          // sp → src[b + span − 1], stepping down one value per tap.
          f.get(src).get(b).i32(8).mul().add().get(spanTop).add().set(sp);
          f.i32(0).set(i);
          f.while(
            () => f.get(i).get(span).ltU(),
            () => {
              f.get(sp).loadF64().splat().set(x);
              f.get(acc01).get(tp).load().get(x).vmul().vadd().set(acc01);
              f.get(acc23).get(tp).load(16).get(x).vmul().vadd().set(acc23);
              f.get(tp).i32(32).add().set(tp);
              f.get(sp).i32(8).sub().set(sp);
              f.get(i).i32(1).add().set(i);
            },
          );
          f.get(out).get(acc01).store();
          f.get(out).get(acc23).store(16);
          f.get(out).i32(32).add().set(out);
          f.get(g).i32(1).add().set(g);
        },
      );
      f.get(b).i32(1).add().set(b);
    },
  );
  return f;
}

function decimate2Function(): Fn {
  const f = new Fn([I32, I32, I32, I32, I32, I32]);
  const src = 0, taps = 1, dst = 2, count = 3, half = 4, step = 5;
  const m = f.local(I32), c = f.local(I32), i = f.local(I32), tp = f.local(I32), pf = f.local(I32), pb = f.local(I32);
  const s1 = f.local(I32), s2 = f.local(I32), s3 = f.local(I32), s4 = f.local(I32);
  const h = f.local(V128), a0 = f.local(V128), a1 = f.local(V128), a2 = f.local(V128), a3 = f.local(V128);
  const accs = [a0, a1, a2, a3];
  const stepAt = (p: number, j: number) => {
    f.get(p);
    if (j > 0) f.get([0, s1, s2, s3][j]!).add();
  };
  f.get(step).i32(16).mul().set(s1); // bytes between neighbouring outputs' centres
  f.get(s1).get(s1).add().set(s2);
  f.get(s2).get(s1).add().set(s3);
  f.get(s2).get(s2).add().set(s4);
  f.get(src).get(half).i32(16).mul().add().set(c);
  // One group of `n` outputs (centres c, c + s1, …): acc_j = h[0]·x[c_j], then per tap
  // acc_j ← acc_j + h[i]·(x[c_j + i] + x[c_j − i]).
  const group = (n: number) => {
    f.get(taps).loadF64().splat().set(h);
    for (let j = 0; j < n; j++) {
      f.get(h);
      stepAt(c, j);
      f.load().vmul().set(accs[j]!);
    }
    f.get(c).i32(16).add().set(pf);
    f.get(c).i32(16).sub().set(pb);
    f.get(taps).i32(8).add().set(tp);
    f.i32(1).set(i);
    f.while(
      () => f.get(half).get(i).geU(),
      () => {
        f.get(tp).loadF64().splat().set(h);
        for (let j = 0; j < n; j++) {
          f.get(accs[j]!).get(h);
          stepAt(pf, j);
          f.load();
          stepAt(pb, j);
          f.load().vadd().vmul().vadd().set(accs[j]!);
        }
        f.get(pf).i32(16).add().set(pf);
        f.get(pb).i32(16).sub().set(pb);
        f.get(tp).i32(8).add().set(tp);
        f.get(i).i32(1).add().set(i);
      },
    );
    for (let j = 0; j < n; j++) f.get(dst).get(accs[j]!).store(16 * j);
    f.get(dst).i32(16 * n).add().set(dst);
    f.get(m).i32(n).add().set(m);
  };
  f.while(() => f.get(m).i32(4).add().get(count).leU(), () => {
    group(4);
    f.get(c).get(s4).add().set(c);
  });
  f.while(() => f.get(m).get(count).ltU(), () => {
    group(1);
    f.get(c).get(s1).add().set(c);
  });
  return f;
}

/** The module's bytes (exported for a test that checks they validate). */
export function polyphaseModuleBytes(): Uint8Array {
  return assemble([['interpolate', interpolateFunction()], ['decimate2', decimate2Function()]], { export: 'memory', initialPages: 1 });
}

export class PolyphaseWasm {
  readonly kernels: Kernels;
  /** Float64 view of the whole memory; replaced when the memory grows. */
  heap: Float64Array;
  #top = 64;
  // Scratch areas shared by every user (JavaScript runs one call at a time; each call copies its
  // input in and the caller reads the result before the next call). Byte offsets, sizes in doubles.
  #taps = 0;
  #tapsSize = 0;
  #src = 0;
  #srcSize = 0;
  #dst = 0;
  #dstSize = 0;
  /** Which taps array the taps area holds. */
  #loaded: Float64Array | null = null;
  #decTaps = 0;
  #decTapsSize = 0;
  #decLoaded: Float64Array | null = null;
  #frames = 0;
  #framesSize = 0;
  #pairs = 0;
  #pairsSize = 0;

  constructor(kernels: Kernels) {
    this.kernels = kernels;
    this.heap = new Float64Array(kernels.memory.buffer);
  }

  /** Reserves `doubles` numbers (16-byte aligned) and returns the byte offset. */
  #alloc(doubles: number): number {
    const at = (this.#top + 15) & ~15;
    const end = at + 8 * doubles;
    const have = this.kernels.memory.buffer.byteLength;
    if (end > have) {
      this.kernels.memory.grow(Math.ceil((end - have) / 65536));
      this.heap = new Float64Array(this.kernels.memory.buffer);
    }
    this.#top = end;
    return at;
  }

  /**
   * y[b·D + r] = Σ_{i<span} h_r[i]·v[(first + b + span − 1 − i) & mask] for b < blocks, r < D
   * (`quadTaps` as in the kernel: [(g·span + i)·4 + j] = h_{4g+j}[i], D = quadTaps.length/span).
   * Returns the index in `heap` of y[0] (valid until the next call). Do not change a taps array's
   * values between calls (the copy is made again only for a different array).
   */
  interpolate(quadTaps: Float64Array, span: number, v: Float64Array, mask: number, first: number, blocks: number): number {
    const d = quadTaps.length / span, values = blocks + span - 1;
    if (quadTaps.length > this.#tapsSize) {
      this.#tapsSize = Math.max(quadTaps.length, 2 * this.#tapsSize);
      this.#taps = this.#alloc(this.#tapsSize);
      this.#loaded = null;
    }
    if (values > this.#srcSize) {
      this.#srcSize = Math.max(values, 2 * this.#srcSize);
      this.#src = this.#alloc(this.#srcSize);
    }
    if (blocks * d > this.#dstSize) {
      this.#dstSize = Math.max(blocks * d, 2 * this.#dstSize);
      this.#dst = this.#alloc(this.#dstSize);
    }
    const heap = this.heap;
    if (this.#loaded !== quadTaps) {
      heap.set(quadTaps, this.#taps / 8);
      this.#loaded = quadTaps;
    }
    const s = this.#src / 8, at = first & mask;
    if (at + values <= mask + 1) heap.set(v.subarray(at, at + values), s);
    else for (let k = 0; k < values; k++) heap[s + k] = v[(first + k) & mask]!;
    this.kernels.interpolate(this.#src, this.#taps, this.#dst, blocks, span, d / 4);
    return this.#dst / 8;
  }

  /**
   * Two channels decimated by `step` with the symmetric filter `taps` (2L + 1 taps, h[L − i] =
   * h[L + i]): for m < count, with c = lo + L + m·step, out0[m] = h[L]·x0[c] + Σ_{i=1…L}
   * h[L + i]·(x0[c + i] + x0[c − i]) and out1 the same on x1, the sums from i = 1 up; x0, x1 are
   * rings (index & mask). Returns the index in `heap` of out0[0]; out1[m] is at +1, out_c[m] at
   * +2m (valid until the next call). Do not change a taps array's values between calls.
   */
  decimate2(taps: Float64Array, x0: Float64Array, x1: Float64Array, mask: number, lo: number, step: number, count: number): number {
    const l = (taps.length - 1) / 2, frames = (count - 1) * step + 2 * l + 1;
    if (l + 1 > this.#decTapsSize) {
      this.#decTapsSize = l + 1;
      this.#decTaps = this.#alloc(l + 1);
      this.#decLoaded = null;
    }
    if (2 * frames > this.#framesSize) {
      this.#framesSize = Math.max(2 * frames, 2 * this.#framesSize);
      this.#frames = this.#alloc(this.#framesSize);
    }
    if (2 * count > this.#pairsSize) {
      this.#pairsSize = Math.max(2 * count, 2 * this.#pairsSize);
      this.#pairs = this.#alloc(this.#pairsSize);
    }
    const heap = this.heap;
    if (this.#decLoaded !== taps) {
      heap.set(taps.subarray(l), this.#decTaps / 8);
      this.#decLoaded = taps;
    }
    const s = this.#frames / 8;
    for (let k = 0; k < frames; k++) {
      const at = (lo + k) & mask;
      heap[s + 2 * k] = x0[at]!;
      heap[s + 2 * k + 1] = x1[at]!;
    }
    this.kernels.decimate2(this.#frames, this.#decTaps, this.#pairs, count, l, step);
    return this.#pairs / 8;
  }
}

let instance: PolyphaseWasm | null | undefined;

/** The shared kernel, or null where WebAssembly SIMD cannot be used. */
export function polyphaseWasm(): PolyphaseWasm | null {
  if (instance !== undefined) return instance;
  const exports = instantiateStandalone(polyphaseModuleBytes());
  instance = exports ? new PolyphaseWasm(exports as unknown as Kernels) : null;
  return instance;
}
