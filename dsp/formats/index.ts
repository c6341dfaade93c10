/**
 * Pure audio file formats: header parsing (WAV/BWF/RF64/BW64, AIFF/AIFC, FLAC metadata), sample
 * codecs, the bext chunk and streaming WAV/AIFF header building. No Node or DOM APIs: used by the
 * Node reader/writer (main/io), the browser editor and Web Workers alike.
 */
export * from './types.ts';
export * from './bytes.ts';
export * from './codec.ts';
export * from './bext.ts';
export * from './layout.ts';
export * from './wav.ts';
export * from './wav-writer.ts';
export * from './aiff.ts';
export * from './flac.ts';
export * from './flac-frames.ts';
export * from './limits.ts';
