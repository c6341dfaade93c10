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

/** The module's bytes (exported for a test that checks they validate). */
export function polyphaseModuleBytes(): Uint8Array {
  return assemble([['interpolate', interpolateFunction()]], { export: 'memory', initialPages: 1 });
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
}

let instance: PolyphaseWasm | null | undefined;

/** The shared kernel, or null where WebAssembly SIMD cannot be used. */
export function polyphaseWasm(): PolyphaseWasm | null {
  if (instance !== undefined) return instance;
  const exports = instantiateStandalone(polyphaseModuleBytes());
  instance = exports ? new PolyphaseWasm(exports as unknown as Kernels) : null;
  return instance;
}
