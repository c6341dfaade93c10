/**
 * The small WebAssembly assembler behind the hand-written SIMD kernels (fft-wasm.ts,
 * simd-kernels.ts): the binary encoding pieces (LEB128 integers, vectors, sections, names, value
 * types), a function builder `Fn` with just the instructions the kernels use, and `assemble`, which
 * makes a module of named functions over an exported or an imported memory.
 * WebAssembly Core Specification 2.0, "Binary Format" (integers §5.2.2, vectors §5.1.3,
 * instructions §5.4, modules and sections §5.5), with the fixed-width SIMD instructions (§5.4.8).
 */

export const I32 = 0x7f, F64 = 0x7c, V128 = 0x7b;

/** Unsigned LEB128. */
export function uleb(v: number): number[] {
  const out: number[] = [];
  do {
    let b = v & 0x7f;
    v >>>= 7;
    if (v !== 0) b |= 0x80;
    out.push(b);
  } while (v !== 0);
  return out;
}

/** Signed LEB128. */
export function sleb(v: number): number[] {
  const out: number[] = [];
  for (;;) {
    const b = v & 0x7f;
    v >>= 7;
    if ((v === 0 && (b & 0x40) === 0) || (v === -1 && (b & 0x40) !== 0)) {
      out.push(b);
      return out;
    }
    out.push(b | 0x80);
  }
}

/** A vector: its length, then its items. */
export const vec = (items: number[][]): number[] => [...uleb(items.length), ...items.flat()];

/** A section: id, byte length, payload. */
export const section = (id: number, payload: number[]): number[] => [id, ...uleb(payload.length), ...payload];

/** A name (ASCII here): length, then bytes. */
export const name = (s: string): number[] => [...uleb(s.length), ...Array.from(s, (c) => c.charCodeAt(0))];

/** The eight bytes of a float64 (little-endian on every target). */
export function f64Bytes(v: number): number[] {
  const b = new Uint8Array(new Float64Array([v]).buffer);
  return Array.from(b);
}

/** Byte order on this machine is little-endian for both typed arrays and wasm on every target V8 runs on. */
function v128F64(a: number, b: number): number[] {
  return [...f64Bytes(a), ...f64Bytes(b)];
}

/** Swaps the two f64 lanes: bytes 8…15 then 0…7. */
const SWAP = [8, 9, 10, 11, 12, 13, 14, 15, 0, 1, 2, 3, 4, 5, 6, 7];

/**
 * One function being assembled: its signature, its locals (numbered after the parameters) and its
 * code, written by chaining instruction methods (`f.get(a).get(b).vadd().set(a)`).
 */
export class Fn {
  readonly code: number[] = [];
  readonly #locals: number[] = [];
  readonly params: number[];
  readonly results: number[];

  constructor(params: number[], results: number[] = []) {
    this.params = params;
    this.results = results;
  }

  local(type: number): number {
    this.#locals.push(type);
    return this.params.length + this.#locals.length - 1;
  }

  #emit(...bytes: number[]): this {
    for (const b of bytes) this.code.push(b);
    return this;
  }

  get = (i: number) => this.#emit(0x20, ...uleb(i));
  set = (i: number) => this.#emit(0x21, ...uleb(i));
  tee = (i: number) => this.#emit(0x22, ...uleb(i));
  i32 = (v: number) => this.#emit(0x41, ...sleb(v));
  f64 = (v: number) => this.#emit(0x44, ...f64Bytes(v));
  add = () => this.#emit(0x6a); // i32.add
  sub = () => this.#emit(0x6b); // i32.sub
  mul = () => this.#emit(0x6c); // i32.mul
  and = () => this.#emit(0x71); // i32.and
  shl = () => this.#emit(0x74); // i32.shl
  ltU = () => this.#emit(0x49);
  gtU = () => this.#emit(0x4b);
  leU = () => this.#emit(0x4d);
  geU = () => this.#emit(0x4f);
  ne = () => this.#emit(0x47);
  eq = () => this.#emit(0x46);
  eqz = () => this.#emit(0x45);
  loadI32 = (offset = 0) => this.#emit(0x28, 2, ...uleb(offset));
  loadF64 = (offset = 0) => this.#emit(0x2b, 3, ...uleb(offset));
  storeF64 = (offset = 0) => this.#emit(0x39, 3, ...uleb(offset));
  fadd = () => this.#emit(0xa0); // f64.add
  fsub = () => this.#emit(0xa1); // f64.sub
  #simd = (op: number, ...imm: number[]) => this.#emit(0xfd, ...uleb(op), ...imm);
  load = (offset = 0) => this.#simd(0x00, 3, ...uleb(offset)); // v128.load (align 8)
  store = (offset = 0) => this.#simd(0x0b, 3, ...uleb(offset)); // v128.store
  vconst = (a: number, b: number) => this.#simd(0x0c, ...v128F64(a, b));
  swap = () => this.#simd(0x0d, ...SWAP); // i8x16.shuffle: push the same vector twice before it
  splat = () => this.#simd(0x14); // f64x2.splat
  vadd = () => this.#simd(0xf0); // f64x2.add
  vsub = () => this.#simd(0xf1); // f64x2.sub
  vmul = () => this.#simd(0xf2); // f64x2.mul
  xor = () => this.#simd(0x51); // v128.xor
  lane = (l: number) => this.#simd(0x21, l); // f64x2.extract_lane

  /** `if (cond) then` — cond must be on the stack. */
  if(then: () => void): this {
    this.#emit(0x04, 0x40);
    then();
    return this.#emit(0x0b);
  }

  /** `if (cond) then else otherwise`. */
  ifElse(then: () => void, otherwise: () => void): this {
    this.#emit(0x04, 0x40);
    then();
    this.#emit(0x05);
    otherwise();
    return this.#emit(0x0b);
  }

  /** `while (cond()) body()`. */
  while(cond: () => void, body: () => void): this {
    this.#emit(0x02, 0x40, 0x03, 0x40);
    cond();
    this.#emit(0x45, 0x0d, 1); // i32.eqz; br_if 1 (leave the block)
    body();
    return this.#emit(0x0c, 0, 0x0b, 0x0b); // br 0 (loop); end; end
  }

  /** `until (done()) body()`: the loop is left as soon as done() is true (checked before body). */
  until(done: () => void, body: () => void): this {
    this.#emit(0x02, 0x40, 0x03, 0x40);
    done();
    this.#emit(0x0d, 1); // br_if 1 (leave the block)
    body();
    return this.#emit(0x0c, 0, 0x0b, 0x0b);
  }

  /** The function body as the code section stores it: size, local declarations, code, end. */
  encode(): number[] {
    const groups: number[] = [];
    let runs = 0;
    for (let i = 0; i < this.#locals.length; ) {
      let j = i;
      while (j < this.#locals.length && this.#locals[j] === this.#locals[i]) j++;
      groups.push(...uleb(j - i), this.#locals[i]!);
      runs++;
      i = j;
    }
    const body = [...uleb(runs), ...groups, ...this.code, 0x0b];
    return [...uleb(body.length), ...body];
  }
}

/** Where a module's memory comes from: its own, exported under a name, or one imported from the host. */
export type ModuleMemory = { readonly export: string; readonly initialPages: number } | { readonly import: readonly [string, string]; readonly minimumPages: number };

/**
 * Assembles a module of named functions (exported under their names, in order) over `memory`.
 * Functions with the same signature share one type.
 */
export function assemble(fns: readonly (readonly [string, Fn])[], memory: ModuleMemory): Uint8Array {
  const types: number[][] = [];
  const typeOf = fns.map(([, f]) => {
    const t = [0x60, ...vec(f.params.map((p) => [p])), ...vec(f.results.map((r) => [r]))];
    const key = t.join(',');
    let i = types.findIndex((u) => u.join(',') === key);
    if (i < 0) i = types.push(t) - 1;
    return i;
  });
  const fnExports = fns.map(([n], i) => [...name(n), 0x00, ...uleb(i)]);
  const own = 'export' in memory;
  const bytes = [
    0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00,
    ...section(1, vec(types)),
    ...(own ? [] : section(2, vec([[...name(memory.import[0]), ...name(memory.import[1]), 0x02, 0x00, ...uleb(memory.minimumPages)]]))),
    ...section(3, vec(typeOf.map((i) => uleb(i)))),
    ...(own ? section(5, vec([[0x00, ...uleb(memory.initialPages)]])) : []),
    ...section(7, vec(own ? [[...name(memory.export), 0x02, 0x00], ...fnExports] : fnExports)),
    ...section(10, vec(fns.map(([, f]) => f.encode()))),
  ];
  return new Uint8Array(bytes);
}

interface WasmApi {
  validate(bytes: Uint8Array): boolean;
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object, imports?: object) => { readonly exports: Record<string, unknown> };
}

/**
 * The exports of a module that imports nothing (it defines its own memory), or null where
 * WebAssembly is missing or rejects the bytes (for instance no SIMD).
 */
export function instantiateStandalone(bytes: Uint8Array): Record<string, unknown> | null {
  const api = (globalThis as unknown as { WebAssembly?: WasmApi }).WebAssembly;
  if (!api) return null;
  try {
    if (!api.validate(bytes)) return null;
    return new api.Instance(new api.Module(bytes), {}).exports;
  } catch {
    return null;
  }
}
