/**
 * WebAssembly SIMD (f64x2) versions of the FFT kernels in fft.ts, assembled at load time from the
 * instruction lists below by ./wasm-assembler.ts (no build step, no binary blobs). One complex
 * number fills one v128 lane pair (re, im), so a complex add is one instruction and a complex
 * multiply four
 * (x·[wr, wr] + swap(x)·[−wi, wi]).
 *
 * The kernels evaluate exactly the same floating-point expressions in the same order as the
 * TypeScript kernels in fft.ts (IEEE add/multiply per lane, no fused multiply-add), so both give
 * identical numbers; the tests hold them to that.
 *
 * Memory: one module instance with one linear memory for all plans. It holds read-only tables per
 * transform size (bit-reversal offsets, twiddles laid out as v128 pairs) and scratch areas shared by
 * every plan — safe because JavaScript runs one call at a time and each call copies its input in and
 * its result out before returning. The memory only grows (when a larger size first appears).
 *
 * Where WebAssembly or its SIMD extension is missing (or compiling throws, as Chromium does for
 * synchronous compiles on its main thread), `wasmFft()` returns null and fft.ts uses its own kernels.
 */
import { assemble, F64, Fn, I32, instantiateStandalone, V128 } from './wasm-assembler.ts';

// ---------------------------------------------------------------------------------------------
// Minimal typings: dsp/ compiles against lib ES2022 only, which does not declare WebAssembly.

interface WasmMemory {
  readonly buffer: ArrayBuffer;
  grow(deltaPages: number): number;
}

/** The exported kernels. All pointers are byte offsets into the module's memory. */
interface Kernels {
  memory: WasmMemory;
  /** Unscaled complex DFT of m points, src → dst (different areas); radix 1, 2 or 4 first stage. */
  fft(src: number, dst: number, rev: number, tw: number, m: number, radix: number, inverse: number): void;
  /** The same with the input multiplied by win (same layout as src) as it is read. */
  fftWindowed(src: number, win: number, dst: number, rev: number, tw: number, m: number, radix: number, inverse: number): void;
  /** In place: N/2-point complex spectrum → bins 0…N/2 of the real signal. */
  split(s: number, table: number, n: number): void;
  /** Bins 0…N/2 at x → the N/2 complex values z whose inverse transform is the signal (× 1/N). */
  join(x: number, z: number, table: number, n: number, scale: number): void;
  /** count doubles at p multiplied by factor (count even). */
  scale(p: number, count: number, factor: number): void;
  /** acc[i] += t[i]·w[i], i < n (n even). */
  overlapAdd(acc: number, t: number, w: number, n: number): void;
}

// ---------------------------------------------------------------------------------------------
// The kernels.

/** y = x·[wr, wr] + swap(x)·[−wi, wi] for x in local `x`, twiddle halves in locals `wr`, `wi`. */
function cmul(f: Fn, x: number, wr: number, wi: number): void {
  f.get(x).get(wr).vmul().get(x).get(x).swap().get(wi).vmul().vadd();
}

/**
 * The complex transform: first stage on bit-reversed input (optionally windowed), then the radix-4
 * stages in place. Mirrors complexTransform() in fft.ts step for step.
 */
function fftFunction(windowed: boolean): Fn {
  const params = windowed ? [I32, I32, I32, I32, I32, I32, I32, I32] : [I32, I32, I32, I32, I32, I32, I32];
  const f = new Fn(params);
  const src = 0, win = windowed ? 1 : -1, dst = windowed ? 2 : 1, rev = dst + 1, tw = dst + 2, m = dst + 3, radix = dst + 4, inv = dst + 5;
  const g = f.local(I32), gEnd = f.local(I32), j = f.local(I32), b = f.local(I32);
  const h = f.local(I32), qtr = f.local(I32), q3 = f.local(I32);
  const rot = f.local(V128), a0 = f.local(V128), a1 = f.local(V128), a2 = f.local(V128), a3 = f.local(V128);
  const s = f.local(V128), d = f.local(V128), t = f.local(V128), e = f.local(V128), fr = f.local(V128);

  // ∓j rotation as a sign flip of one lane of swap(E): forward flips lane 1 (−jE = [ei, −er]),
  // inverse lane 0 (+jE = [−ei, er]). XOR with −0 flips the sign bit: the same bits as × −1.
  f.get(inv).ifElse(() => f.vconst(-0, 0).set(rot), () => f.vconst(0, -0).set(rot));

  /** Push input element at byte offset (local b) + extra, times the window when windowed. */
  const input = (extra: number) => {
    f.get(src).get(b).add();
    if (extra >= 0) f.get(extra).add();
    f.load();
    if (windowed) {
      f.get(win).get(b).add();
      if (extra >= 0) f.get(extra).add();
      f.load().vmul();
    }
  };

  f.get(radix).i32(4).eq().ifElse(
    () => {
      f.get(m).i32(8).mul().set(h); // M/2 complex = 8m bytes
      f.get(m).i32(4).mul().set(qtr);
      f.get(h).get(qtr).add().set(q3);
      f.get(rev).set(g);
      f.get(rev).get(m).add().set(gEnd); // m/4 entries of 4 bytes
      f.get(dst).set(j);
      f.while(
        () => f.get(g).get(gEnd).ltU(),
        () => {
          f.get(g).loadI32().set(b);
          input(-1);
          f.set(a0);
          input(h);
          f.set(a1);
          input(qtr);
          f.set(a2);
          input(q3);
          f.set(a3);
          f.get(a0).get(a1).vadd().set(s);
          f.get(a0).get(a1).vsub().set(d);
          f.get(a2).get(a3).vadd().set(t);
          f.get(a2).get(a3).vsub().set(e);
          f.get(e).get(e).swap().get(rot).xor().set(fr);
          f.get(j).get(s).get(t).vadd().store(0);
          f.get(j).get(d).get(fr).vadd().store(16);
          f.get(j).get(s).get(t).vsub().store(32);
          f.get(j).get(d).get(fr).vsub().store(48);
          f.get(g).i32(4).add().set(g);
          f.get(j).i32(64).add().set(j);
        },
      );
    },
    () =>
      f.get(radix).i32(2).eq().ifElse(
        () => {
          f.get(m).i32(8).mul().set(h);
          f.get(rev).set(g);
          f.get(rev).get(m).i32(2).mul().add().set(gEnd); // m/2 entries
          f.get(dst).set(j);
          f.while(
            () => f.get(g).get(gEnd).ltU(),
            () => {
              f.get(g).loadI32().set(b);
              input(-1);
              f.set(a0);
              input(h);
              f.set(a1);
              f.get(j).get(a0).get(a1).vadd().store(0);
              f.get(j).get(a0).get(a1).vsub().store(16);
              f.get(g).i32(4).add().set(g);
              f.get(j).i32(32).add().set(j);
            },
          );
        },
        () => {
          f.i32(0).set(b);
          f.get(dst);
          input(-1);
          f.store(0);
        },
      ),
  );

  // Radix-4 stages. qb = quarter span in bytes; twiddles: 12 doubles (96 bytes) per k.
  const qb = f.local(I32), span = f.local(I32), end = f.local(I32), k = f.local(I32), kEnd = f.local(I32);
  const w = f.local(I32), twp = f.local(I32), i0 = f.local(I32), i1 = f.local(I32), i2 = f.local(I32), i3 = f.local(I32);
  const w1r = f.local(V128), w1i = f.local(V128), w2r = f.local(V128), w2i = f.local(V128), w3r = f.local(V128), w3i = f.local(V128);
  const x1 = f.local(V128), x2 = f.local(V128), x3 = f.local(V128);
  f.get(radix).i32(16).mul().set(qb);
  f.get(dst).get(m).i32(16).mul().add().set(end);
  f.get(tw).set(twp);
  f.while(
    () => f.get(qb).i32(4).mul().get(m).i32(16).mul().leU(),
    () => {
      f.get(qb).i32(4).mul().set(span);
      f.get(dst).set(k);
      f.get(dst).get(qb).add().set(kEnd);
      f.get(twp).set(w);
      f.while(
        () => f.get(k).get(kEnd).ltU(),
        () => {
          f.get(w).load(0).set(w1r);
          f.get(w).load(16).set(w1i);
          f.get(w).load(32).set(w2r);
          f.get(w).load(48).set(w2i);
          f.get(w).load(64).set(w3r);
          f.get(w).load(80).set(w3i);
          f.get(k).set(i0);
          f.while(
            () => f.get(i0).get(end).ltU(),
            () => {
              f.get(i0).get(qb).add().tee(i1).load().set(x1);
              f.get(i1).get(qb).add().tee(i2).load().set(x2);
              f.get(i2).get(qb).add().tee(i3).load().set(x3);
              cmul(f, x1, w2r, w2i);
              f.set(a1);
              cmul(f, x2, w1r, w1i);
              f.set(a2);
              cmul(f, x3, w3r, w3i);
              f.set(a3);
              f.get(i0).load().set(a0);
              f.get(a0).get(a1).vadd().set(s);
              f.get(a0).get(a1).vsub().set(d);
              f.get(a2).get(a3).vadd().set(t);
              f.get(a2).get(a3).vsub().set(e);
              f.get(e).get(e).swap().get(rot).xor().set(fr);
              f.get(i0).get(s).get(t).vadd().store();
              f.get(i2).get(s).get(t).vsub().store();
              f.get(i1).get(d).get(fr).vadd().store();
              f.get(i3).get(d).get(fr).vsub().store();
              f.get(i0).get(span).add().set(i0);
            },
          );
          f.get(k).i32(16).add().set(k);
          f.get(w).i32(96).add().set(w);
        },
      );
      f.get(twp).get(qb).i32(6).mul().add().set(twp);
      f.get(qb).i32(4).mul().set(qb);
    },
  );
  return f;
}

/** splitForward() of fft.ts: table holds [c, c, −s', s'] per k with (c, s') = ½e^{−j2πk/N}. */
function splitFunction(): Fn {
  const f = new Fn([I32, I32, I32]);
  const sp = 0, table = 1, n = 2;
  const z0r = f.local(F64), z0i = f.local(F64), i = f.local(I32), j = f.local(I32), hp = f.local(I32);
  const v = f.local(V128), u = f.local(V128), fe = f.local(V128), p = f.local(V128), t = f.local(V128);
  const conj = f.local(V128), half = f.local(V128);
  f.vconst(0, -0).set(conj); // XOR: negate lane 1 (conjugate), the same bits as × [1, −1]
  f.vconst(0.5, 0.5).set(half);
  f.get(sp).loadF64(0).set(z0r);
  f.get(sp).loadF64(8).set(z0i);
  f.get(sp).get(z0r).get(z0i).fadd().storeF64(0);
  f.get(sp).f64(0).storeF64(8);
  f.get(sp).get(n).i32(8).mul().add().tee(j).get(z0r).get(z0i).fsub().storeF64(0);
  f.get(j).f64(0).storeF64(8);
  f.get(sp).i32(16).add().set(i);
  f.get(j).i32(16).sub().set(j);
  f.get(table).i32(32).add().set(hp);
  f.while(
    () => f.get(i).get(j).leU(),
    () => {
      f.get(i).load().set(v);
      f.get(j).load().set(u);
      // Fe = ½(v + [c, −d]); P = swap(v)·[1, −1] + swap(u) = [b + d, c − a]
      f.get(half).get(v).get(u).get(conj).xor().vadd().vmul().set(fe);
      f.get(v).get(v).swap().get(conj).xor().get(u).get(u).swap().vadd().set(p);
      f.get(p).get(hp).load(0).vmul().get(p).get(p).swap().get(hp).load(16).vmul().vadd().set(t);
      f.get(i).get(fe).get(t).vadd().store();
      f.get(j).get(fe).get(t).vsub().get(conj).xor().store();
      f.get(i).i32(16).add().set(i);
      f.get(j).i32(16).sub().set(j);
      f.get(hp).i32(32).add().set(hp);
    },
  );
  return f;
}

/** joinInverse() of fft.ts: table holds [c, c, −s, s] per k with c + js = e^{+j2πk/N}. */
function joinFunction(): Fn {
  const f = new Fn([I32, I32, I32, I32, F64]);
  const x = 0, z = 1, table = 2, n = 3, scale = 4;
  const i = f.local(I32), j = f.local(I32), cp = f.local(I32), last = f.local(I32);
  const sv = f.local(V128), xv = f.local(V128), yv = f.local(V128), e = f.local(V128), dd = f.local(V128), o = f.local(V128), so = f.local(V128);
  const conj = f.local(V128), neg0 = f.local(V128);
  f.vconst(0, -0).set(conj); // XOR masks: negate lane 1 / lane 0 (same bits as × [1, −1] / [−1, 1])
  f.vconst(-0, 0).set(neg0);
  f.get(scale).splat().set(sv);
  f.i32(0).set(i);
  f.get(n).i32(8).mul().set(j);
  f.get(n).i32(4).mul().set(last);
  f.get(table).set(cp);
  f.while(
    () => f.get(i).get(last).leU(),
    () => {
      f.get(x).get(i).add().load().set(xv);
      f.get(x).get(j).add().load().get(conj).xor().set(yv); // X*[M−k]
      f.get(sv).get(xv).get(yv).vadd().vmul().set(e);
      f.get(sv).get(xv).get(yv).vsub().vmul().set(dd);
      // O = D·e^{+j2πk/N}; keep swap(O)
      f.get(dd).get(cp).load(0).vmul().get(dd).get(dd).swap().get(cp).load(16).vmul().vadd().set(o);
      f.get(o).get(o).swap().set(so);
      f.get(z).get(i).add().get(e).get(so).get(neg0).xor().vadd().store(); // E + jO
      f.get(i).eqz().eqz().get(i).get(j).ne().and().if(() => {
        f.get(z).get(j).add().get(so).get(e).get(conj).xor().vadd().store(); // E* + jO*
      });
      f.get(i).i32(16).add().set(i);
      f.get(j).i32(16).sub().set(j);
      f.get(cp).i32(32).add().set(cp);
    },
  );
  return f;
}

function scaleFunction(): Fn {
  const f = new Fn([I32, I32, F64]);
  const p = 0, count = 1, factor = 2;
  const end = f.local(I32), sv = f.local(V128);
  f.get(factor).splat().set(sv);
  f.get(p).get(count).i32(8).mul().add().set(end);
  f.while(
    () => f.get(p).get(end).ltU(),
    () => {
      f.get(p).get(p).load().get(sv).vmul().store();
      f.get(p).i32(16).add().set(p);
    },
  );
  return f;
}

function overlapAddFunction(): Fn {
  const f = new Fn([I32, I32, I32, I32]);
  const acc = 0, t = 1, w = 2, n = 3;
  const end = f.local(I32);
  f.get(acc).get(n).i32(8).mul().add().set(end);
  f.while(
    () => f.get(acc).get(end).ltU(),
    () => {
      f.get(acc).get(acc).load().get(t).load().get(w).load().vmul().vadd().store();
      f.get(acc).i32(16).add().set(acc);
      f.get(t).i32(16).add().set(t);
      f.get(w).i32(16).add().set(w);
    },
  );
  return f;
}

/** The module's bytes (exported for tests that check the encoding validates). */
export function fftModuleBytes(): Uint8Array {
  return assemble(
    [
      ['fft', fftFunction(false)],
      ['fftWindowed', fftFunction(true)],
      ['split', splitFunction()],
      ['join', joinFunction()],
      ['scale', scaleFunction()],
      ['overlapAdd', overlapAddFunction()],
    ],
    { export: 'memory', initialPages: 1 },
  );
}

// ---------------------------------------------------------------------------------------------
// Runtime: memory, tables and scratch.

/** Byte offsets of the read-only tables for complex transforms of m points. */
export interface WasmComplexTables {
  readonly m: number;
  readonly radix: number;
  readonly rev: number;
  readonly forward: number;
  readonly inverse: number;
}

/** Source tables in the layout of fft.ts (see Radix4Tables there). */
export interface ComplexTableSource {
  readonly m: number;
  readonly firstRadix: number;
  readonly bitrev: Int32Array;
  readonly forwardTwiddles: Float64Array;
  readonly inverseTwiddles: Float64Array;
}

export class WasmFft {
  readonly kernels: Kernels;
  /** Float64 view of the whole memory; replaced whenever the memory grows. */
  heap: Float64Array;
  /** Bumped whenever `heap` or the scratch offsets change, so callers can refresh cached views. */
  generation = 0;
  /** Scratch areas (byte offsets), each `scratchDoubles` long; wf and wi hold windows (see window()). */
  a = 0;
  b = 0;
  c = 0;
  wf = 0;
  wi = 0;
  scratchDoubles = 0;
  #top: number;
  readonly #complex = new Map<number, WasmComplexTables>();
  readonly #split = new Map<number, number>();
  readonly #join = new Map<number, number>();
  /** Which arrays (and lengths) the two window areas hold copies of. */
  #forwardWindow: Float64Array | null = null;
  #forwardWindowLength = 0;
  #inverseWindow: Float64Array | null = null;
  #inverseWindowLength = 0;

  constructor(kernels: Kernels) {
    this.kernels = kernels;
    this.heap = new Float64Array(kernels.memory.buffer);
    this.#top = 64;
  }

  /** Reserves `bytes` (16-byte aligned) and returns the offset. */
  #alloc(bytes: number): number {
    const at = (this.#top + 15) & ~15;
    const end = at + bytes;
    const have = this.kernels.memory.buffer.byteLength;
    if (end > have) {
      this.kernels.memory.grow(Math.ceil((end - have) / 65536));
      this.heap = new Float64Array(this.kernels.memory.buffer);
      this.generation++;
    }
    this.#top = end;
    return at;
  }

  /**
   * Byte offset of a copy of window[0…n−1] in one of two shared window areas (one for forward,
   * one for inverse transforms). The copy is made again only when a different array or length is
   * passed, so callers must not change a window's values between calls (pass a new array
   * instead). Holding the array keeps it alive, so an identical reference is the same array.
   */
  window(taper: Float64Array, n: number, inverse: boolean): number {
    const at = inverse ? this.wi : this.wf;
    if (inverse ? this.#inverseWindow === taper && this.#inverseWindowLength === n : this.#forwardWindow === taper && this.#forwardWindowLength === n) {
      return at;
    }
    this.heap.set(taper.length === n ? taper : taper.subarray(0, n), at / 8);
    if (inverse) {
      this.#inverseWindow = taper;
      this.#inverseWindowLength = n;
    } else {
      this.#forwardWindow = taper;
      this.#forwardWindowLength = n;
    }
    return at;
  }

  /** Makes sure each scratch area holds at least `doubles` numbers. */
  ensureScratch(doubles: number): void {
    if (doubles <= this.scratchDoubles) return;
    const size = Math.max(doubles, 2 * this.scratchDoubles);
    this.a = this.#alloc(8 * size);
    this.b = this.#alloc(8 * size);
    this.c = this.#alloc(8 * size);
    this.wf = this.#alloc(8 * size);
    this.wi = this.#alloc(8 * size);
    this.#forwardWindow = this.#inverseWindow = null;
    this.scratchDoubles = size;
    this.generation++;
  }

  complexTables(src: ComplexTableSource): WasmComplexTables {
    let t = this.#complex.get(src.m);
    if (t) return t;
    const rev = this.#alloc(4 * src.bitrev.length);
    new Int32Array(this.kernels.memory.buffer, rev, src.bitrev.length).set(src.bitrev.map((v) => 8 * v)); // doubles → bytes
    const forward = this.#twiddles(src.forwardTwiddles);
    const inverse = this.#twiddles(src.inverseTwiddles);
    t = { m: src.m, radix: src.firstRadix, rev, forward, inverse };
    this.#complex.set(src.m, t);
    return t;
  }

  /** (re, im) pairs → [re, re, −im, im] v128 pairs. */
  #twiddles(tw: Float64Array): number {
    const count = tw.length / 2;
    const at = this.#alloc(32 * count);
    const h = this.heap, o = at / 8;
    for (let i = 0; i < count; i++) {
      const re = tw[2 * i]!, im = tw[2 * i + 1]!;
      h[o + 4 * i] = re;
      h[o + 4 * i + 1] = re;
      h[o + 4 * i + 2] = -im;
      h[o + 4 * i + 3] = im;
    }
    return at;
  }

  /** Split table of a real size n from fft.ts's ½e^{−j2πk/N} (k = 0…N/4). */
  splitTable(n: number, half: Float64Array): number {
    let at = this.#split.get(n);
    if (at === undefined) {
      at = this.#twiddles(half);
      this.#split.set(n, at);
    }
    return at;
  }

  /** Join table e^{+j2πk/N} = 2·conj(½e^{−j2πk/N}), computed exactly as fft.ts does. */
  joinTable(n: number, half: Float64Array): number {
    let at = this.#join.get(n);
    if (at === undefined) {
      const full = new Float64Array(half.length);
      for (let i = 0; i < half.length; i += 2) {
        full[i] = 2 * half[i]!;
        full[i + 1] = -2 * half[i + 1]!;
      }
      at = this.#twiddles(full);
      this.#join.set(n, at);
    }
    return at;
  }
}

let instance: WasmFft | null | undefined;

/** The shared SIMD kernels, or null where WebAssembly SIMD cannot be used. */
export function wasmFft(): WasmFft | null {
  if (instance !== undefined) return instance;
  const exports = instantiateStandalone(fftModuleBytes());
  instance = exports ? new WasmFft(exports as unknown as Kernels) : null;
  return instance;
}
