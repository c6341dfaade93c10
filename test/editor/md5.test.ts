/** The session checksum: incremental MD5 against RFC 1321's test suite and Node's own MD5. */
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { Md5 } from '../../renderer/src/lib/md5.ts';
import { seededRng } from '../helpers/rng.ts';

const hex = (s: string) => new Md5().update(new TextEncoder().encode(s)).hex();

describe('Md5', () => {
  it('matches the RFC 1321 appendix A.5 test suite', () => {
    // Source: RFC 1321, A.5 Test suite.
    expect(hex('')).toBe('d41d8cd98f00b204e9800998ecf8427e');
    expect(hex('a')).toBe('0cc175b9c0f1b6a831c399e269772661');
    expect(hex('abc')).toBe('900150983cd24fb0d6963f7d28e17f72');
    expect(hex('message digest')).toBe('f96b697d7cb7938d525a2f31aaf161d0');
    expect(hex('abcdefghijklmnopqrstuvwxyz')).toBe('c3fcd3d76192e4007dfb496cca67e13b');
    expect(hex('12345678901234567890123456789012345678901234567890123456789012345678901234567890')).toBe('57edf4a22be3c955ac49da2e2107b67a');
  });

  it('gives node:crypto’s digest however the bytes are split into chunks', () => {
    const rng = seededRng(1321);
    const data = Uint8Array.from({ length: 100_003 }, () => Math.floor(rng() * 256));
    const want = createHash('md5').update(data).digest('hex');
    for (const sizes of [[1], [63, 64, 65], [4096], [100_003]]) {
      const m = new Md5();
      let at = 0, k = 0;
      while (at < data.length) { const n = sizes[k++ % sizes.length]!; m.update(data.subarray(at, at + n)); at += n; }
      expect(m.hex()).toBe(want);
    }
  });
});
