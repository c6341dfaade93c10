/**
 * Small WebAssembly SIMD kernels for the resampler's and the echo canceller's inner loops (two doubles per instruction):
 *  - dot1(h, x, n, out):        out[0] = Σ_k h[k]·x[k]
 *  - dot2(h, x0, x1, n, out):   out[0] = Σ h[k]·x0[k], out[1] = Σ h[k]·x1[k] (coefficients loaded once)
 *  - dot2Run(bank, n, den, advInt, advRem, phase, x0, x1, count, out): `count` dot2 calls along a
 *                               polyphase bank (coefficients at bank + 8·phase·n), the signals
 *                               stepping by advInt (+1 when phase wraps past den) frames each, the
 *                               pairs of sums at out + 16·k (the same sums as dot2, one call)
 *  - farrow(tab, mu, n, out):   out[k] = ((c3·μ + c2)·μ + c1)·μ + c0, table laid out per pair of taps as
 *                               [c0 c0' c1 c1' c2 c2' c3 c3'] (8 doubles per two taps)
 *  - farrowDot2(tab, mu, x0, x1, n, out): the two above fused (coefficients never stored)
 *  - echoRun(taps, hist, x, nt, run): x[k] −= Σ_j taps[j]·hist[k + j] for k < run (pairs only: the
 *                               last sample of an odd run is left to the caller), in place; the echo
 *                               canceller's inner loop over a run of mutually independent outputs
 * Pointers are byte offsets into an imported memory, n (taps) is even. The module is assembled here
 * from its instructions by ./wasm-assembler.ts (WebAssembly binary format 1.0 with the fixed-width
 * SIMD proposal, standard since 2021 and available in Node ≥ 16 and current browsers), so nothing
 * is fetched or built.
 *
 * WebAssembly is part of the JavaScript engine (not Node or the DOM); it is reached through
 * globalThis with a minimal local type so dsp/ still compiles with lib ES2022 only. When it is
 * missing or rejects SIMD, `createSimdKernels` returns null and callers use their plain loops.
 */
import { assemble, F64, Fn, I32, V128 } from './wasm-assembler.ts';

interface WasmMemory {
  readonly buffer: ArrayBuffer;
}
interface WasmApi {
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object, imports: Record<string, Record<string, unknown>>) => { exports: Record<string, unknown> };
  Memory: new (descriptor: { initial: number; maximum?: number }) => WasmMemory;
}

export interface SimdKernels {
  /** Float64 view of the whole memory (index = byte offset / 8). */
  readonly f64: Float64Array;
  dot1(h: number, x: number, n: number, out: number): void;
  dot2(h: number, x0: number, x1: number, n: number, out: number): void;
  dot2Run(bank: number, n: number, den: number, advInt: number, advRem: number, phase: number, x0: number, x1: number, count: number, out: number): void;
  farrow(tab: number, mu: number, n: number, out: number): void;
  farrowDot2(tab: number, mu: number, x0: number, x1: number, n: number, out: number): void;
  echoRun(taps: number, hist: number, x: number, nt: number, run: number): void;
}

/** acc ← acc + a·b (acc a v128 local; a, b push their operands). */
function mulAdd(f: Fn, acc: number, a: () => void, b: () => void): void {
  f.get(acc);
  a();
  b();
  f.vmul().vadd().set(acc);
}
/** Horizontal sum of a v128 local onto the f64 stack. */
const hsum = (f: Fn, v: number) => f.get(v).lane(0).get(v).lane(1).fadd();
/** v ← [0, 0]. */
const zero = (f: Fn, v: number) => f.f64(0).splat().set(v);

/** dot1(h, x, n, out): two accumulators over four doubles per step, then one pair. */
function dot1Function(): Fn {
  const f = new Fn([I32, I32, I32, I32]);
  const h = 0, x = 1, n = 2, out = 3;
  const i = f.local(I32), end = f.local(I32), a = f.local(V128), b = f.local(V128);
  const at = (p: number, off: number) => () => f.get(p).get(i).add().load(off);
  f.get(n).i32(3).shl().set(end); // end = n·8
  zero(f, a);
  zero(f, b);
  f.until(
    () => f.get(i).i32(32).add().get(end).gtU(), // while i + 32 ≤ end
    () => {
      mulAdd(f, a, at(h, 0), at(x, 0));
      mulAdd(f, b, at(h, 16), at(x, 16));
      f.get(i).i32(32).add().set(i);
    },
  );
  f.get(i).get(end).ltU().if(() => mulAdd(f, a, at(h, 0), at(x, 0))); // one pair left
  f.get(a).get(b).vadd().set(a);
  f.get(out);
  hsum(f, a).storeF64(0);
  return f;
}

/** dot2(h, x0, x1, n, out): dot1 on two signals, each coefficient pair loaded once. */
function dot2Function(): Fn {
  const f = new Fn([I32, I32, I32, I32, I32]);
  const h = 0, x0 = 1, x1 = 2, n = 3, out = 4;
  const i = f.local(I32), end = f.local(I32);
  const a0 = f.local(V128), b0 = f.local(V128), a1 = f.local(V128), b1 = f.local(V128), h01 = f.local(V128), h23 = f.local(V128);
  const hAt = (off: number) => f.get(h).get(i).add().load(off);
  const xAt = (p: number, off: number) => () => f.get(p).get(i).add().load(off);
  const use = (v: number) => () => f.get(v);
  f.get(n).i32(3).shl().set(end);
  zero(f, a0);
  zero(f, b0);
  zero(f, a1);
  zero(f, b1);
  f.until(
    () => f.get(i).i32(32).add().get(end).gtU(),
    () => {
      hAt(0).set(h01);
      hAt(16).set(h23);
      mulAdd(f, a0, use(h01), xAt(x0, 0));
      mulAdd(f, b0, use(h23), xAt(x0, 16));
      mulAdd(f, a1, use(h01), xAt(x1, 0));
      mulAdd(f, b1, use(h23), xAt(x1, 16));
      f.get(i).i32(32).add().set(i);
    },
  );
  f.get(i).get(end).ltU().if(() => {
    hAt(0).set(h01);
    mulAdd(f, a0, use(h01), xAt(x0, 0));
    mulAdd(f, a1, use(h01), xAt(x1, 0));
  });
  f.get(a0).get(b0).vadd().set(a0);
  f.get(a1).get(b1).vadd().set(a1);
  f.get(out);
  hsum(f, a0).storeF64(0);
  f.get(out);
  hsum(f, a1).storeF64(8);
  return f;
}

/** dot2Run: dot2's loop (the same operations in the same order) for `count` outputs in one call. */
function dot2RunFunction(): Fn {
  const f = new Fn([I32, I32, I32, I32, I32, I32, I32, I32, I32, I32]);
  const bank = 0, n = 1, den = 2, advInt = 3, advRem = 4, phase = 5, x0 = 6, x1 = 7, count = 8, out = 9;
  const i = f.local(I32), end = f.local(I32), h = f.local(I32), k = f.local(I32), step = f.local(I32);
  const a0 = f.local(V128), b0 = f.local(V128), a1 = f.local(V128), b1 = f.local(V128), h01 = f.local(V128), h23 = f.local(V128);
  const hAt = (off: number) => f.get(h).get(i).add().load(off);
  const xAt = (p: number, off: number) => () => f.get(p).get(i).add().load(off);
  const use = (v: number) => () => f.get(v);
  f.get(n).i32(3).shl().set(end);
  f.get(advInt).i32(3).shl().set(step);
  f.until(
    () => f.get(k).get(count).geU(),
    () => {
      f.get(bank).get(phase).get(n).mul().i32(3).shl().add().set(h);
      f.i32(0).set(i);
      zero(f, a0);
      zero(f, b0);
      zero(f, a1);
      zero(f, b1);
      f.until(
        () => f.get(i).i32(32).add().get(end).gtU(),
        () => {
          hAt(0).set(h01);
          hAt(16).set(h23);
          mulAdd(f, a0, use(h01), xAt(x0, 0));
          mulAdd(f, b0, use(h23), xAt(x0, 16));
          mulAdd(f, a1, use(h01), xAt(x1, 0));
          mulAdd(f, b1, use(h23), xAt(x1, 16));
          f.get(i).i32(32).add().set(i);
        },
      );
      f.get(i).get(end).ltU().if(() => {
        hAt(0).set(h01);
        mulAdd(f, a0, use(h01), xAt(x0, 0));
        mulAdd(f, a1, use(h01), xAt(x1, 0));
      });
      f.get(a0).get(b0).vadd().set(a0);
      f.get(a1).get(b1).vadd().set(a1);
      f.get(out);
      hsum(f, a0).storeF64(0);
      f.get(out);
      hsum(f, a1).storeF64(8);
      f.get(out).i32(16).add().set(out);
      f.get(x0).get(step).add().set(x0);
      f.get(x1).get(step).add().set(x1);
      f.get(phase).get(advRem).add().set(phase);
      f.get(phase).get(den).geU().if(() => {
        f.get(phase).get(den).sub().set(phase);
        f.get(x0).i32(8).add().set(x0);
        f.get(x1).i32(8).add().set(x1);
      });
      f.get(k).i32(1).add().set(k);
    },
  );
  return f;
}

/** farrow(tab, mu, n, out): Horner in μ per pair of taps (64 bytes of table per pair). */
function farrowFunction(): Fn {
  const f = new Fn([I32, F64, I32, I32]);
  const tab = 0, mu = 1, n = 2, out = 3;
  const i = f.local(I32), o = f.local(I32), end = f.local(I32), m = f.local(V128), v = f.local(V128);
  const tabAt = (off: number) => f.get(tab).get(i).add().load(off);
  const horner = (off: number) => {
    f.get(v).get(m).vmul();
    tabAt(off).vadd().set(v);
  };
  f.get(n).i32(5).shl().set(end); // end = n·32 bytes of table
  f.get(mu).splat().set(m);
  f.while(
    () => f.get(i).get(end).ltU(),
    () => {
      tabAt(48).set(v);
      horner(32);
      horner(16);
      horner(0);
      f.get(out).get(o).add().get(v).store(0);
      f.get(i).i32(64).add().set(i);
      f.get(o).i32(16).add().set(o);
    },
  );
  return f;
}

/** farrowDot2(tab, mu, x0, x1, n, out): farrow's coefficients used at once, never stored. */
function farrowDot2Function(): Fn {
  const f = new Fn([I32, F64, I32, I32, I32, I32]);
  const tab = 0, mu = 1, x0 = 2, x1 = 3, n = 4, out = 5;
  const i = f.local(I32), j = f.local(I32), end = f.local(I32); // table bytes, sample bytes
  const m = f.local(V128), v = f.local(V128), a0 = f.local(V128), a1 = f.local(V128);
  const tabAt = (off: number) => f.get(tab).get(i).add().load(off);
  const horner = (off: number) => {
    f.get(v).get(m).vmul();
    tabAt(off).vadd().set(v);
  };
  const xj = (p: number) => () => f.get(p).get(j).add().load(0);
  f.get(n).i32(5).shl().set(end);
  f.get(mu).splat().set(m);
  zero(f, a0);
  zero(f, a1);
  f.while(
    () => f.get(i).get(end).ltU(),
    () => {
      tabAt(48).set(v);
      horner(32);
      horner(16);
      horner(0);
      mulAdd(f, a0, () => f.get(v), xj(x0));
      mulAdd(f, a1, () => f.get(v), xj(x1));
      f.get(i).i32(64).add().set(i);
      f.get(j).i32(16).add().set(j);
    },
  );
  f.get(out);
  hsum(f, a0).storeF64(0);
  f.get(out);
  hsum(f, a1).storeF64(8);
  return f;
}

/**
 * echoRun(taps, hist, x, nt, run): four outputs per outer step (two accumulators share each tap),
 * then one pair.
 */
function echoRunFunction(): Fn {
  const f = new Fn([I32, I32, I32, I32, I32]);
  const taps = 0, hist = 1, x = 2, nt = 3, run = 4;
  const k = f.local(I32), j = f.local(I32), end = f.local(I32), tEnd = f.local(I32), hk = f.local(I32); // bytes
  const a0 = f.local(V128), a1 = f.local(V128), t = f.local(V128);
  const tapLoop = (accs: number[]) => {
    f.i32(0).set(j);
    f.until(
      () => f.get(j).get(tEnd).geU(),
      () => {
        f.get(taps).get(j).add().loadF64(0).splat().set(t);
        accs.forEach((acc, l) => f.get(acc).get(t).get(hk).get(j).add().load(16 * l).vmul().vsub().set(acc));
        f.get(j).i32(8).add().set(j);
      },
    );
  };
  const xk = (off: number) => f.get(x).get(k).add().load(off);
  f.get(run).i32(3).shl().set(end);
  f.get(nt).i32(3).shl().set(tEnd);
  f.until(
    () => f.get(k).i32(32).add().get(end).gtU(), // while k + 4 outputs ≤ run
    () => {
      xk(0).set(a0);
      xk(16).set(a1);
      f.get(hist).get(k).add().set(hk);
      tapLoop([a0, a1]);
      f.get(x).get(k).add().get(a0).store(0);
      f.get(x).get(k).add().get(a1).store(16);
      f.get(k).i32(32).add().set(k);
    },
  );
  f.get(k).i32(16).add().get(end).leU().if(() => { // k + 2 ≤ run
    xk(0).set(a0);
    f.get(hist).get(k).add().set(hk);
    tapLoop([a0]);
    f.get(x).get(k).add().get(a0).store(0);
  });
  return f;
}

/** The module: the five kernels over the memory imported as env.mem. */
export function simdModuleBytes(): Uint8Array {
  return assemble(
    [
      ['dot1', dot1Function()],
      ['dot2', dot2Function()],
      ['dot2Run', dot2RunFunction()],
      ['farrow', farrowFunction()],
      ['farrowDot2', farrowDot2Function()],
      ['echoRun', echoRunFunction()],
    ],
    { import: ['env', 'mem'], minimumPages: 1 },
  );
}

/** The module, compiled once per process (each caller gets its own instance and memory). */
let compiled: object | undefined;

/**
 * Kernels over a fresh memory of at least `bytes` bytes, or null when WebAssembly SIMD is not
 * available here.
 */
export function createSimdKernels(bytes: number): SimdKernels | null {
  const wasm = (globalThis as unknown as { WebAssembly?: WasmApi }).WebAssembly;
  if (!wasm) return null;
  try {
    const memory = new wasm.Memory({ initial: Math.max(1, Math.ceil(bytes / 65536)) });
    compiled ??= new wasm.Module(simdModuleBytes());
    const instance = new wasm.Instance(compiled, { env: { mem: memory } });
    const e = instance.exports as unknown as {
      dot1: SimdKernels['dot1'];
      dot2: SimdKernels['dot2'];
      dot2Run: SimdKernels['dot2Run'];
      farrow: SimdKernels['farrow'];
      farrowDot2: SimdKernels['farrowDot2'];
      echoRun: SimdKernels['echoRun'];
    };
    return { f64: new Float64Array(memory.buffer), dot1: e.dot1, dot2: e.dot2, dot2Run: e.dot2Run, farrow: e.farrow, farrowDot2: e.farrowDot2, echoRun: e.echoRun };
  } catch {
    return null;
  }
}
