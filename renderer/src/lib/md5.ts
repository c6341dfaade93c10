/**
 * Incremental MD5 (RFC 1321) for the session's source checksum, fed chunk by chunk so a large
 * file never sits whole in memory. Same digest as `info`'s audioMd5 (MD5 of the stored audio bytes).
 */
const S = [7, 12, 17, 22, 5, 9, 14, 20, 4, 11, 16, 23, 6, 10, 15, 21];
const K = new Uint32Array(64).map((_, i) => Math.floor(Math.abs(Math.sin(i + 1)) * 2 ** 32) >>> 0);

export class Md5 {
  #h = new Uint32Array([0x67452301, 0xefcdab89, 0x98badcfe, 0x10325476]);
  #buf = new Uint8Array(64);
  #bufLen = 0;
  #total = 0;
  #w = new Uint32Array(16);

  update(data: Uint8Array): this {
    let i = 0;
    this.#total += data.length;
    if (this.#bufLen > 0) {
      const take = Math.min(64 - this.#bufLen, data.length);
      this.#buf.set(data.subarray(0, take), this.#bufLen);
      this.#bufLen += take;
      i = take;
      if (this.#bufLen < 64) return this;
      this.#block(this.#buf, 0);
      this.#bufLen = 0;
    }
    for (; i + 64 <= data.length; i += 64) this.#block(data, i);
    if (i < data.length) {
      this.#buf.set(data.subarray(i), 0);
      this.#bufLen = data.length - i;
    }
    return this;
  }

  /** Hex digest; the object must not be updated afterwards. */
  hex(): string {
    const bits = this.#total * 8;
    const pad = new Uint8Array(((this.#bufLen < 56 ? 56 : 120) - this.#bufLen) + 8);
    pad[0] = 0x80;
    const dv = new DataView(pad.buffer);
    dv.setUint32(pad.length - 8, bits >>> 0, true);
    dv.setUint32(pad.length - 4, Math.floor(bits / 2 ** 32), true);
    const total = this.#total;
    this.update(pad);
    this.#total = total;
    let out = '';
    for (const word of this.#h) for (let b = 0; b < 4; b++) out += ((word >>> (8 * b)) & 255).toString(16).padStart(2, '0');
    return out;
  }

  #block(d: Uint8Array, at: number): void {
    const w = this.#w;
    for (let j = 0; j < 16; j++) {
      const p = at + 4 * j;
      w[j] = d[p]! | (d[p + 1]! << 8) | (d[p + 2]! << 16) | (d[p + 3]! << 24);
    }
    let a = this.#h[0]!, b = this.#h[1]!, c = this.#h[2]!, e = this.#h[3]!;
    for (let j = 0; j < 64; j++) {
      let f: number, g: number;
      if (j < 16) { f = (b & c) | (~b & e); g = j; }
      else if (j < 32) { f = (e & b) | (~e & c); g = (5 * j + 1) & 15; }
      else if (j < 48) { f = b ^ c ^ e; g = (3 * j + 5) & 15; }
      else { f = c ^ (b | ~e); g = (7 * j) & 15; }
      const t = e;
      e = c;
      c = b;
      const x = (a + f + K[j]! + w[g]!) | 0;
      const s = S[(j >> 4) * 4 + (j & 3)]!;
      b = (b + ((x << s) | (x >>> (32 - s)))) | 0;
      a = t;
    }
    this.#h[0] = (this.#h[0]! + a) | 0;
    this.#h[1] = (this.#h[1]! + b) | 0;
    this.#h[2] = (this.#h[2]! + c) | 0;
    this.#h[3] = (this.#h[3]! + e) | 0;
  }
}
