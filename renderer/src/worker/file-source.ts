/** An AudioSource over a file's bytes, read on demand through the bridge (never the whole file). */
import type { AudioSource, Block, BlockOptions } from '../../../dsp/source.ts';
import { DEFAULT_BLOCK_FRAMES, resolveRange } from '../../../dsp/source.ts';
import { decodeSamples, type AudioLayout } from '../../../dsp/formats/index.ts';

export type ReadBytes = (offset: number, length: number) => Promise<Uint8Array>;

/** Bytes per read: large reads keep the bridge round trips few. */
const READ_BYTES = 8 * 1024 * 1024;

export class FileSource implements AudioSource {
  constructor(private readonly read: ReadBytes, readonly layout: AudioLayout) {}
  get sampleRateHz() { return this.layout.sampleRateHz; }
  get channelCount() { return this.layout.channels; }
  get frames() { return this.layout.frames; }
  get bitsPerSample() { return this.layout.bitsPerSample; }
  get sampleFormat() { return this.layout.sampleFormat; }

  /** Raw stored bytes of frames [start, end) in reads of about `readBytes`, the next `ahead` reads already under way. */
  async *rawChunks(start: number, end: number, reverse = false, readBytes = READ_BYTES, ahead = 1): AsyncIterable<{ firstFrame: number; bytes: Uint8Array }> {
    const align = this.layout.blockAlign;
    const per = Math.max(1, Math.floor(readBytes / align));
    const spans: [number, number][] = [];
    if (reverse) for (let hi = end; hi > start; hi -= per) spans.push([Math.max(start, hi - per), hi]);
    else for (let lo = start; lo < end; lo += per) spans.push([lo, Math.min(end, lo + per)]);
    const fetch = (s: [number, number]) => this.read(this.layout.dataOffset + s[0] * align, (s[1] - s[0]) * align);
    const inFlight: Promise<Uint8Array>[] = [];
    let issued = 0;
    const top = () => { while (issued < spans.length && inFlight.length <= ahead) inFlight.push(fetch(spans[issued++]!)); };
    top();
    for (let k = 0; k < spans.length; k++) {
      const bytes = await inFlight.shift()!;
      top();
      yield { firstFrame: spans[k]![0], bytes };
    }
  }

  async *blocks(options: BlockOptions = {}): AsyncIterable<Block> {
    const [start, end] = resolveRange(this, options);
    const size = Math.max(1, Math.floor(options.blockFrames ?? DEFAULT_BLOCK_FRAMES));
    const n = this.channelCount;
    if (options.reverse) {
      // Whole blocks counted from the end, as MemorySource does.
      let pending: Float64Array[] | null = null;
      let have = 0;
      for await (const { bytes } of this.rawChunks(start, end, true)) {
        const frames = Math.floor(bytes.length / this.layout.blockAlign);
        const dec = Array.from({ length: n }, () => new Float64Array(frames));
        decodeSamples(bytes, 0, this.layout.encoding, n, frames, dec, 0);
        for (const d of dec) d.reverse();
        let at = 0;
        while (at < frames) {
          if (!pending) { pending = Array.from({ length: n }, () => new Float64Array(size)); have = 0; }
          const take = Math.min(size - have, frames - at);
          for (let c = 0; c < n; c++) pending[c]!.set(dec[c]!.subarray(at, at + take), have);
          have += take;
          at += take;
          if (have === size) { yield pending; pending = null; }
        }
      }
      if (pending && have > 0) yield pending.map((a) => a.slice(0, have));
      return;
    }
    let pending: Float64Array[] | null = null;
    let have = 0;
    for await (const { bytes } of this.rawChunks(start, end)) {
      const frames = Math.floor(bytes.length / this.layout.blockAlign);
      let at = 0;
      while (at < frames) {
        if (!pending) { pending = Array.from({ length: n }, () => new Float64Array(Math.min(size, end - start))); have = 0; }
        const take = Math.min(pending[0]!.length - have, frames - at);
        decodeSamples(bytes, at * this.layout.blockAlign, this.layout.encoding, n, take, pending, have);
        have += take;
        at += take;
        if (have === pending[0]!.length) { yield pending; pending = null; }
      }
    }
    if (pending && have > 0) yield pending.map((a) => a.slice(0, have));
  }
}
