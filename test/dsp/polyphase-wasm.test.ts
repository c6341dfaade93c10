/**
 * The WebAssembly SIMD polyphase-interpolation kernel (dsp/core/polyphase-wasm.ts) against the
 * plain loop it stands in for in the time-stretcher's low band.
 */
import { describe, expect, it } from 'vitest';
import { polyphaseModuleBytes, polyphaseWasm } from '../../dsp/core/polyphase-wasm.ts';

describe('polyphase interpolation kernel', () => {
  it('validates', () => {
    // Source: WebAssembly core specification 1.0 + fixed-width SIMD (WebAssembly.validate).
    expect(WebAssembly.validate(new Uint8Array(polyphaseModuleBytes()))).toBe(true);
  });

  it('gives exactly the numbers of the scalar loop (same products, summed in the same order), also across a ring wrap', () => {
    // Source: exact identity — IEEE 754 multiply and add per lane, no fused multiply-add, in the
    // order acc = ((0 + h[0]x[0]) + h[1]x[1]) + …, as the scalar loop in dsp/stretch/low-band.ts.
    const k = polyphaseWasm();
    expect(k).not.toBeNull();
    let seed = 7;
    const rnd = () => {
      seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
      return seed / 4294967296 - 0.5;
    };
    for (const [d, span] of [[4, 21], [8, 13], [16, 9], [4, 1]] as const) {
      const taps = Float64Array.from({ length: d * span }, rnd); // phase r's tap i at [r·span + i]
      const quad = new Float64Array(d * span);
      for (let r = 0; r < d; r++) for (let i = 0; i < span; i++) quad[((r >> 2) * span + i) * 4 + (r & 3)] = taps[r * span + i]!;
      const mask = 255, v = Float64Array.from({ length: mask + 1 }, () => rnd() * 1e3);
      for (const first of [3, 250]) {
        const blocks = 40;
        const at = k!.interpolate(quad, span, v, mask, first, blocks);
        let same = 0;
        for (let b = 0; b < blocks; b++) {
          for (let r = 0; r < d; r++) {
            let acc = 0;
            for (let i = 0; i < span; i++) acc += taps[r * span + i]! * v[(first + b + span - 1 - i) & mask]!;
            if (Object.is(k!.heap[at + b * d + r], acc)) same++;
          }
        }
        expect(same).toBe(blocks * d);
      }
    }
  });

  it('decimates two channels with exactly the numbers of the scalar loop (symmetric taps, same order), also across a ring wrap', () => {
    // Source: exact identity — IEEE 754 add and multiply per lane, no fused multiply-add, each
    // output v = h[L]·x[c], then v += h[L + i]·(x[c + i] + x[c − i]) for i = 1…L in that order, as
    // the scalar loop in dsp/stretch/low-band.ts `decimate`.
    const k = polyphaseWasm();
    expect(k).not.toBeNull();
    let seed = 11;
    const rnd = () => {
      seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
      return seed / 4294967296 - 0.5;
    };
    for (const [step, l, count] of [[4, 38, 37], [2, 5, 4], [8, 1, 3], [4, 0, 9], [3, 20, 1], [4, 38, 1024]] as const) {
      const half = Float64Array.from({ length: l + 1 }, rnd);
      const taps = new Float64Array(2 * l + 1);
      for (let i = 0; i <= l; i++) taps[l + i] = taps[l - i] = half[i]!;
      const mask = 8191, x0 = Float64Array.from({ length: mask + 1 }, () => rnd() * 1e3), x1 = Float64Array.from({ length: mask + 1 }, () => rnd() * 1e-3);
      for (const lo of [5, mask - 100]) {
        const at = k!.decimate2(taps, x0, x1, mask, lo, step, count);
        let same = 0;
        for (let m = 0; m < count; m++) {
          const c = lo + l + m * step;
          for (const [lane, x] of [[0, x0], [1, x1]] as const) {
            let v = taps[l]! * x[c & mask]!;
            for (let i = 1; i <= l; i++) v += taps[l + i]! * (x[(c + i) & mask]! + x[(c - i) & mask]!);
            if (Object.is(k!.heap[at + 2 * m + lane], v)) same++;
          }
        }
        expect(same).toBe(2 * count);
      }
    }
  });
});
