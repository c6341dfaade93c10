/**
 * Small WebAssembly SIMD kernels for the resampler's and the echo canceller's inner loops (two doubles per instruction):
 *  - dot1(h, x, n, out):        out[0] = Σ_k h[k]·x[k]
 *  - dot2(h, x0, x1, n, out):   out[0] = Σ h[k]·x0[k], out[1] = Σ h[k]·x1[k] (coefficients loaded once)
 *  - farrow(tab, mu, n, out):   out[k] = ((c3·μ + c2)·μ + c1)·μ + c0, table laid out per pair of taps as
 *                               [c0 c0' c1 c1' c2 c2' c3 c3'] (8 doubles per two taps)
 *  - farrowDot2(tab, mu, x0, x1, n, out): the two above fused (coefficients never stored)
 *  - echoRun(taps, hist, x, nt, run): x[k] −= Σ_j taps[j]·hist[k + j] for k < run (pairs only: the
 *                               last sample of an odd run is left to the caller), in place; the echo
 *                               canceller's inner loop over a run of mutually independent outputs
 * Pointers are byte offsets into an imported memory, n (taps) is even. The module is assembled here
 * from its bytes (WebAssembly binary format 1.0 with the fixed-width SIMD proposal, standard since
 * 2021 and available in Node ≥ 16 and current browsers), so nothing is fetched or built.
 *
 * WebAssembly is part of the JavaScript engine (not Node or the DOM); it is reached through
 * globalThis with a minimal local type so dsp/ still compiles with lib ES2022 only. When it is
 * missing or rejects SIMD, `createSimdKernels` returns null and callers use their plain loops.
 */
import { F64, I32, name, section, sleb, uleb, V128, vec } from './wasm-encoding.ts';

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
  farrow(tab: number, mu: number, n: number, out: number): void;
  farrowDot2(tab: number, mu: number, x0: number, x1: number, n: number, out: number): void;
  echoRun(taps: number, hist: number, x: number, nt: number, run: number): void;
}

// --- a tiny assembler -------------------------------------------------------------------------
// Instructions
const get = (i: number) => [0x20, ...uleb(i)];
const set = (i: number) => [0x21, ...uleb(i)];
const i32c = (v: number) => [0x41, ...sleb(v)];
const I32_ADD = [0x6a], I32_SHL = [0x74], I32_GT_U = [0x4b], I32_LT_U = [0x49];
const F64_ADD = [0xa0];
const f64c0 = [0x44, 0, 0, 0, 0, 0, 0, 0, 0];
const simd = (op: number, ...imm: number[]) => [0xfd, ...uleb(op), ...imm];
const mem = (align: number, offset: number) => [...uleb(align), ...uleb(offset)];
const v128load = (offset: number) => simd(0x00, ...mem(3, offset));
const v128store = (offset: number) => simd(0x0b, ...mem(3, offset));
const f64store = (offset: number) => [0x39, ...mem(3, offset)];
const F64X2_SPLAT = simd(0x14), F64X2_ADD = simd(0xf0), F64X2_SUB = simd(0xf1), F64X2_MUL = simd(0xf2);
const f64load = (offset: number) => [0x2b, ...mem(3, offset)];
const I32_GE_U = [0x4f];
const lane = (l: number) => simd(0x21, l);
const BLOCK = [0x02, 0x40], LOOP = [0x03, 0x40], END = [0x0b], IF = [0x04, 0x40];
const brIf = (d: number) => [0x0d, ...uleb(d)];
const br = (d: number) => [0x0c, ...uleb(d)];
const body = (locals: [number, number][], code: number[][]) => {
  const b = [...vec(locals.map(([n, t]) => [...uleb(n), t])), ...code.flat(), ...END];
  return [...uleb(b.length), ...b];
};
/** v ← v + a·b (all v128 locals given as indices; a, b as instruction lists). */
const mulAdd = (acc: number, a: number[], b: number[]) => [...get(acc), ...a, ...b, ...F64X2_MUL, ...F64X2_ADD, ...set(acc)];
/** Horizontal sum of a v128 local onto the f64 stack. */
const hsum = (v: number) => [...get(v), ...lane(0), ...get(v), ...lane(1), ...F64_ADD];

function moduleBytes(): Uint8Array {
  // Types: 0 dot1(i32 i32 i32 i32), 1 dot2(i32 i32 i32 i32 i32), 2 farrow(i32 f64 i32 i32),
  // 3 farrowDot2(i32 f64 i32 i32 i32 i32), 4 echoRun(i32 i32 i32 i32 i32) (same shape as dot2)
  const types = vec([
    [0x60, ...vec([[I32], [I32], [I32], [I32]]), ...vec([])],
    [0x60, ...vec([[I32], [I32], [I32], [I32], [I32]]), ...vec([])],
    [0x60, ...vec([[I32], [F64], [I32], [I32]]), ...vec([])],
    [0x60, ...vec([[I32], [F64], [I32], [I32], [I32], [I32]]), ...vec([])],
  ]);
  const imports = vec([[...name('env'), ...name('mem'), 0x02, 0x00, ...uleb(1)]]);
  const funcs = vec([[0], [1], [2], [3], [1]]);
  const exports = vec([
    [...name('dot1'), 0x00, ...uleb(0)],
    [...name('dot2'), 0x00, ...uleb(1)],
    [...name('farrow'), 0x00, ...uleb(2)],
    [...name('farrowDot2'), 0x00, ...uleb(3)],
    [...name('echoRun'), 0x00, ...uleb(4)],
  ]);

  // dot1: params h=0 x=1 n=2 out=3; locals i=4 (i32) end=5 (i32) a=6 b=7 (v128)
  const dot1 = body([[2, I32], [2, V128]], [
    get(2), i32c(3), I32_SHL, set(5), // end = n·8
    f64c0, F64X2_SPLAT, set(6), f64c0, F64X2_SPLAT, set(7),
    BLOCK, LOOP,
    get(4), i32c(32), I32_ADD, get(5), I32_GT_U, brIf(1), // while i + 32 ≤ end
    mulAdd(6, [...get(0), ...get(4), ...I32_ADD, ...v128load(0)], [...get(1), ...get(4), ...I32_ADD, ...v128load(0)]),
    mulAdd(7, [...get(0), ...get(4), ...I32_ADD, ...v128load(16)], [...get(1), ...get(4), ...I32_ADD, ...v128load(16)]),
    get(4), i32c(32), I32_ADD, set(4),
    br(0), END, END,
    get(4), get(5), I32_LT_U, IF, // one pair left
    mulAdd(6, [...get(0), ...get(4), ...I32_ADD, ...v128load(0)], [...get(1), ...get(4), ...I32_ADD, ...v128load(0)]),
    END,
    get(6), get(7), F64X2_ADD, set(6),
    get(3), hsum(6), f64store(0),
  ]);

  // dot2: params h=0 x0=1 x1=2 n=3 out=4; locals i=5 end=6 (i32); a0=7 b0=8 a1=9 b1=10 h01=11 h23=12 (v128)
  const hAt = (off: number) => [...get(0), ...get(5), ...I32_ADD, ...v128load(off)];
  const xAt = (p: number, off: number) => [...get(p), ...get(5), ...I32_ADD, ...v128load(off)];
  const dot2 = body([[2, I32], [6, V128]], [
    get(3), i32c(3), I32_SHL, set(6),
    f64c0, F64X2_SPLAT, set(7), f64c0, F64X2_SPLAT, set(8), f64c0, F64X2_SPLAT, set(9), f64c0, F64X2_SPLAT, set(10),
    BLOCK, LOOP,
    get(5), i32c(32), I32_ADD, get(6), I32_GT_U, brIf(1),
    hAt(0), set(11), hAt(16), set(12),
    mulAdd(7, get(11), xAt(1, 0)),
    mulAdd(8, get(12), xAt(1, 16)),
    mulAdd(9, get(11), xAt(2, 0)),
    mulAdd(10, get(12), xAt(2, 16)),
    get(5), i32c(32), I32_ADD, set(5),
    br(0), END, END,
    get(5), get(6), I32_LT_U, IF,
    hAt(0), set(11),
    mulAdd(7, get(11), xAt(1, 0)),
    mulAdd(9, get(11), xAt(2, 0)),
    END,
    get(7), get(8), F64X2_ADD, set(7),
    get(9), get(10), F64X2_ADD, set(9),
    get(4), hsum(7), f64store(0),
    get(4), hsum(9), f64store(8),
  ]);

  // farrow: params tab=0 mu=1 (f64) n=2 out=3; locals i=4 (table byte offset) o=5 (out byte offset) end=6; m=7 v=8 (v128)
  const tabAt = (off: number) => [...get(0), ...get(4), ...I32_ADD, ...v128load(off)];
  const horner = (off: number) => [...get(8), ...get(7), ...F64X2_MUL, ...tabAt(off), ...F64X2_ADD, ...set(8)];
  const farrow = body([[3, I32], [2, V128]], [
    get(2), i32c(5), I32_SHL, set(6), // end = n·32 bytes of table (64 bytes per pair)
    get(1), F64X2_SPLAT, set(7),
    BLOCK, LOOP,
    get(4), get(6), I32_LT_U, [0x45], brIf(1), // while i < end
    tabAt(48), set(8),
    horner(32), horner(16), horner(0),
    get(3), get(5), I32_ADD, get(8), v128store(0),
    get(4), i32c(64), I32_ADD, set(4),
    get(5), i32c(16), I32_ADD, set(5),
    br(0), END, END,
  ]);
  // farrowDot2: params tab=0 mu=1 x0=2 x1=3 n=4 out=5; locals i=6 (table bytes) j=7 (sample bytes)
  // end=8 (i32); m=9 v=10 a0=11 a1=12 (v128)
  const tab2 = (off: number) => [...get(0), ...get(6), ...I32_ADD, ...v128load(off)];
  const horner2 = (off: number) => [...get(10), ...get(9), ...F64X2_MUL, ...tab2(off), ...F64X2_ADD, ...set(10)];
  const xj = (p: number) => [...get(p), ...get(7), ...I32_ADD, ...v128load(0)];
  const farrowDot2 = body([[3, I32], [4, V128]], [
    get(4), i32c(5), I32_SHL, set(8),
    get(1), F64X2_SPLAT, set(9),
    f64c0, F64X2_SPLAT, set(11), f64c0, F64X2_SPLAT, set(12),
    BLOCK, LOOP,
    get(6), get(8), I32_LT_U, [0x45], brIf(1),
    tab2(48), set(10),
    horner2(32), horner2(16), horner2(0),
    mulAdd(11, get(10), xj(2)),
    mulAdd(12, get(10), xj(3)),
    get(6), i32c(64), I32_ADD, set(6),
    get(7), i32c(16), I32_ADD, set(7),
    br(0), END, END,
    get(5), hsum(11), f64store(0),
    get(5), hsum(12), f64store(8),
  ]);
  // echoRun: params taps=0 hist=1 x=2 nt=3 run=4; locals k=5 (bytes) j=6 (bytes) end=7 tEnd=8
  // hk=9 (i32); a0=10 a1=11 t=12 (v128). Four outputs per outer step (two accumulators share each
  // tap), then one pair.
  const tapLoop = (accs: number[]) => [
    ...i32c(0), ...set(6),
    ...BLOCK, ...LOOP,
    ...get(6), ...get(8), ...I32_GE_U, ...brIf(1),
    ...get(0), ...get(6), ...I32_ADD, ...f64load(0), ...F64X2_SPLAT, ...set(12),
    ...accs.flatMap((a, i) => [...get(a), ...get(12), ...get(9), ...get(6), ...I32_ADD, ...v128load(16 * i), ...F64X2_MUL, ...F64X2_SUB, ...set(a)]),
    ...get(6), ...i32c(8), ...I32_ADD, ...set(6),
    ...br(0), ...END, ...END,
  ];
  const xk = (off: number) => [...get(2), ...get(5), ...I32_ADD, ...v128load(off)];
  const echoRun = body([[5, I32], [3, V128]], [
    get(4), i32c(3), I32_SHL, set(7),
    get(3), i32c(3), I32_SHL, set(8),
    BLOCK, LOOP,
    get(5), i32c(32), I32_ADD, get(7), I32_GT_U, brIf(1), // while k + 4 outputs ≤ run
    xk(0), set(10), xk(16), set(11),
    get(1), get(5), I32_ADD, set(9),
    tapLoop([10, 11]),
    get(2), get(5), I32_ADD, get(10), v128store(0),
    get(2), get(5), I32_ADD, get(11), v128store(16),
    get(5), i32c(32), I32_ADD, set(5),
    br(0), END, END,
    get(5), i32c(16), I32_ADD, get(7), [0x4d], IF, // k + 2 ≤ run (i32.le_u)
    xk(0), set(10),
    get(1), get(5), I32_ADD, set(9),
    tapLoop([10]),
    get(2), get(5), I32_ADD, get(10), v128store(0),
    END,
  ]);
  const code = [...uleb(5), ...dot1, ...dot2, ...farrow, ...farrowDot2, ...echoRun];
  return new Uint8Array([
    0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00,
    ...section(1, types),
    ...section(2, imports),
    ...section(3, funcs),
    ...section(7, exports),
    ...section(10, code),
  ]);
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
    compiled ??= new wasm.Module(moduleBytes());
    const instance = new wasm.Instance(compiled, { env: { mem: memory } });
    const e = instance.exports as unknown as {
      dot1: SimdKernels['dot1'];
      dot2: SimdKernels['dot2'];
      farrow: SimdKernels['farrow'];
      farrowDot2: SimdKernels['farrowDot2'];
      echoRun: SimdKernels['echoRun'];
    };
    return { f64: new Float64Array(memory.buffer), dot1: e.dot1, dot2: e.dot2, farrow: e.farrow, farrowDot2: e.farrowDot2, echoRun: e.echoRun };
  } catch {
    return null;
  }
}
