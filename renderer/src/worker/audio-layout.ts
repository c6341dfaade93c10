/**
 * Parsing a file's layout with the pure parsers of dsp/formats when the bytes arrive
 * asynchronously (through the bridge): the parser's synchronous reads are answered from ranges
 * fetched so far; a read past them stops the parse, the range is fetched, and the parse runs again.
 */
import { InputError } from '../../../dsp/errors.ts';
import { parseAudioLayout, type AudioLayout } from '../../../dsp/formats/index.ts';

class NeedBytes {
  constructor(readonly offset: number, readonly length: number) {}
}

/** Parses the layout, fetching what the parser asks for (at most `maxFetches` extra ranges). */
export async function readLayout(
  fetch: (offset: number, length: number) => Promise<Uint8Array>,
  fileSize: number,
  name: string,
  maxFetches = 64,
): Promise<AudioLayout> {
  const ranges: { offset: number; bytes: Uint8Array }[] = [{ offset: 0, bytes: await fetch(0, Math.min(fileSize, 1 << 16)) }];
  for (let k = 0; k <= maxFetches; k++) {
    try {
      return parseAudioLayout((offset, length) => {
        const end = Math.min(fileSize, offset + length);
        const r = ranges.find((x) => x.offset <= offset && x.offset + x.bytes.length >= end);
        if (r) return r.bytes.subarray(offset - r.offset, end - r.offset);
        throw new NeedBytes(offset, end - offset);
      }, fileSize, name);
    } catch (e) {
      if (!(e instanceof NeedBytes)) throw e;
      ranges.push({ offset: e.offset, bytes: await fetch(e.offset, Math.min(fileSize - e.offset, Math.max(e.length, 1 << 16))) });
    }
  }
  throw new InputError('the header asks for too many separate reads', name, 0);
}
