/**
 * The small WebAssembly assembler (dsp/core/wasm-assembler.ts) that both SIMD modules are built with.
 */
import { describe, expect, it } from 'vitest';
import { assemble, Fn, I32, sleb, uleb } from '../../dsp/core/wasm-assembler.ts';
import { fftModuleBytes } from '../../dsp/core/fft-wasm.ts';
import { simdModuleBytes } from '../../dsp/core/simd-kernels.ts';

describe('LEB128', () => {
  it('encodes the published unsigned and signed examples', () => {
    // Source: DWARF Debugging Information Format, Version 4, §7.6, Figures 22 and 23 (LEB128
    // examples), the encoding the WebAssembly binary format uses for its integers.
    const unsigned: [number, number[]][] = [[2, [0x02]], [127, [0x7f]], [128, [0x80, 0x01]], [129, [0x81, 0x01]], [130, [0x82, 0x01]], [12857, [0xb9, 0x64]]];
    for (const [v, bytes] of unsigned) expect(uleb(v)).toEqual(bytes);
    const signed: [number, number[]][] = [
      [2, [0x02]], [-2, [0x7e]], [127, [0xff, 0x00]], [-127, [0x81, 0x7f]],
      [128, [0x80, 0x01]], [-128, [0x80, 0x7f]], [129, [0x81, 0x01]], [-129, [0xff, 0x7e]],
    ];
    for (const [v, bytes] of signed) expect(sleb(v)).toEqual(bytes);
  });
});

describe('assemble', () => {
  const wasm = WebAssembly;
  /** A copy over a plain ArrayBuffer (what the WebAssembly typings ask for). */
  const own = (b: Uint8Array) => new Uint8Array(b);
  const addThenDouble = () => {
    const f = new Fn([I32, I32], [I32]);
    const s = f.local(I32);
    f.get(0).get(1).add().set(s).get(s).get(s).add();
    return f;
  };
  const minus = () => new Fn([I32, I32], [I32]).get(0).get(1).sub() as Fn;

  it('makes modules over an exported or an imported memory that validate and run', () => {
    // Source: exact identity — (a + b)·2 and a − b in 32-bit integers.
    const exported = own(assemble([['f', addThenDouble()], ['g', minus()]], { export: 'memory', initialPages: 1 }));
    expect(wasm.validate(exported)).toBe(true);
    const a = new wasm.Instance(new wasm.Module(exported), {}).exports as { f: (a: number, b: number) => number; g: (a: number, b: number) => number; memory: WebAssembly.Memory };
    expect(a.f(20, 1)).toBe(42);
    expect(a.g(5, 7)).toBe(-2);
    expect(a.memory.buffer.byteLength).toBe(65536);
    const imported = own(assemble([['f', addThenDouble()]], { import: ['env', 'mem'], minimumPages: 2 }));
    expect(wasm.validate(imported)).toBe(true);
    const mem = new wasm.Memory({ initial: 2 });
    const b = new wasm.Instance(new wasm.Module(imported), { env: { mem } }).exports as { f: (a: number, b: number) => number };
    expect(b.f(-3, 1)).toBe(-4);
    // Fewer pages than the module asks for are refused (WebAssembly JS API, import matching).
    expect(() => new wasm.Instance(new wasm.Module(imported), { env: { mem: new wasm.Memory({ initial: 1 }) } })).toThrow();
  });

  it('functions of one signature share one type entry', () => {
    // Source: WebAssembly Core Specification 2.0 §5.5.4 (type section) — bytes after the header:
    // section id 1, size, one entry 0x60 (i32 i32) → (i32).
    const bytes = assemble([['f', addThenDouble()], ['g', minus()]], { export: 'memory', initialPages: 1 });
    expect(Array.from(bytes.subarray(8, 17))).toEqual([0x01, 0x07, 0x01, 0x60, 0x02, I32, I32, 0x01, I32]);
  });

  it('both SIMD modules validate', () => {
    // Source: WebAssembly JS API, WebAssembly.validate (Node 20 has the fixed-width SIMD proposal).
    expect(wasm.validate(own(fftModuleBytes()))).toBe(true);
    expect(wasm.validate(own(simdModuleBytes()))).toBe(true);
  });
});
