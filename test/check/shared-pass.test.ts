/** SharedPass: concurrent full passes share one read of the source and see exactly its blocks. */
import { describe, expect, it } from 'vitest';
import { MemorySource, readAll, type AudioSource, type Block, type BlockOptions } from '../../dsp/source.ts';
import { SharedPass } from '../../dsp/shared-pass.ts';

/** A MemorySource that counts full passes and can fail after some blocks. */
class CountingSource extends MemorySource {
  fullPasses = 0;
  failAfter = Infinity;
  override async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    if (options.startFrame === undefined && options.endFrame === undefined) this.fullPasses++;
    let n = 0;
    for await (const b of super.blocks(options)) {
      if (n++ >= this.failAfter) throw new Error('read error at block ' + (n - 1));
      yield b;
    }
  }
}

const make = () => {
  const n = 65536 * 5 + 123;
  return new CountingSource([Float64Array.from({ length: n }, (_, i) => Math.sin(i * 0.001)), Float64Array.from({ length: n }, (_, i) => i)], 48000);
};

async function consume(src: AudioSource, mutate = false): Promise<Float64Array[]> {
  const parts: Block[] = [];
  for await (const b of src.blocks()) {
    parts.push(b.map((c) => c.slice()));
    if (mutate) b[0]!.fill(99);
    await new Promise((r) => setTimeout(r, Math.random() * 2));
  }
  const total = parts.reduce((a, b) => a + b[0]!.length, 0);
  const out = [new Float64Array(total), new Float64Array(total)];
  let at = 0;
  for (const p of parts) {
    out[0]!.set(p[0]!, at);
    out[1]!.set(p[1]!, at);
    at += p[0]!.length;
  }
  return out;
}

describe('SharedPass', () => {
  it('serves concurrent full passes from one read, each with its own copy', async () => {
    const src = make();
    const want = await readAll(src);
    src.fullPasses = 0;
    const sp = new SharedPass(src);
    const s = sp.source<AudioSource>();
    expect(s.frames).toBe(src.frames);
    const got = await Promise.all([consume(s, true), consume(s), consume(s, true)]);
    for (const g of got) {
      expect(g[0]!.every((v, i) => v === want[0]![i])).toBe(true);
      expect(g[1]!.every((v, i) => v === want[1]![i])).toBe(true);
    }
    expect(src.fullPasses).toBe(1);
    expect(sp.joined).toBe(3);
  });

  it('lets ranges and late passes read on their own, and an early leaver does not stall the rest', async () => {
    const src = make();
    const sp = new SharedPass(src);
    const s = sp.source<AudioSource>();
    const early = (async () => {
      for await (const b of s.blocks()) {
        void b;
        break;
      }
    })();
    const full = consume(s);
    const range = readAll(s, { startFrame: 1000, endFrame: 3000 });
    await early;
    const r = await range;
    expect(r[1]![0]).toBe(1000);
    expect((await full)[0]!.length).toBe(src.frames);
    const late = await consume(s); // after the shared pass: a separate pass
    expect(late[1]![src.frames - 1]).toBe(src.frames - 1);
    expect(sp.separatePasses).toBe(1);
  });

  it('passes a read error to every consumer', async () => {
    const src = make();
    src.failAfter = 2;
    const s = new SharedPass(src).source<AudioSource>();
    const results = await Promise.allSettled([consume(s), consume(s)]);
    for (const r of results) {
      expect(r.status).toBe('rejected');
      expect(String((r as PromiseRejectedResult).reason)).toMatch(/read error at block 2/);
    }
  });
});
