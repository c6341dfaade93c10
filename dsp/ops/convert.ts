/**
 * `convert IN OUT`: the same audio in a Broadcast WAV file (RF64 past 4 GiB or with --rf64), for
 * archive masters kept as FLAC, AIFF or WAV. The samples pass through untouched: at the same word
 * length the output's audio is bit-exact (the MD5 of its audio equals the source's). The word
 * length comes from the output options every correction has (--bits, --float); TPDF dither is
 * applied only when it shrinks, and a longer word length holds the same values exactly. The
 * source's metadata is kept (WAV chunks byte for byte; FLAC tags and AIFF text chunks as RIFF
 * INFO) and the run is added to the BWF coding history.
 */
import { defineCorrection } from './types.ts';

export const convert = defineCorrection({
  kind: 'correction',
  name: 'convert',
  title: 'Convert',
  summary: 'The same audio as WAV/BWF/RF64 (from FLAC, AIFF or WAV): bit-exact at the same word length, metadata kept.',
  params: [],
  async prepare(source) {
    return {
      sampleRateHz: source.sampleRateHz,
      channelCount: source.channelCount,
      framesHint: source.frames,
      blocks: source.blocks(),
      resolved: {},
    };
  },
  history() {
    return 'reelwright convert';
  },
});
