/**
 * The WebAssembly binary encoding pieces shared by our hand-assembled SIMD kernels
 * (fft-wasm.ts, simd-kernels.ts): LEB128 integers, vectors, sections, names and value types.
 * WebAssembly Core Specification, "Binary Format" (integers §5.2.2, vectors §5.1.3, sections §5.5.2).
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
