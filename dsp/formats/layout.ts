/**
 * parseAudioLayout: recognises the container from its first bytes and parses its header.
 * WAV/BWF/RF64/BW64, AIFF/AIFC and FLAC (metadata only). Everything else is an InputError that says
 * what was expected and where.
 */
import { InputError } from '../errors.ts';
import { parseAiff } from './aiff.ts';
import { fourcc, showId } from './bytes.ts';
import { id3v2Size, parseFlac } from './flac.ts';
import { readExact, type AudioLayout, type ReadFn } from './types.ts';
import { parseWav } from './wav.ts';

/**
 * Parses an audio file's header through a synchronous positioned read.
 * @param read returns the bytes at [offset, offset+length) (fewer at the end of the file)
 * @param fileSize total bytes in the file
 * @param name file name or path, used in error messages
 * @throws InputError naming the expected structure and the byte offset
 */
export function parseAudioLayout(read: ReadFn, fileSize: number, name: string): AudioLayout {
  if (fileSize < 12) {
    throw new InputError(
      `truncated: ${fileSize} bytes is too short for a WAV, AIFF or FLAC header (at least 12 expected)`,
      name,
      0,
    );
  }
  const head = readExact(read, fileSize, name, 0, 12, 'the file header');
  const id = fourcc(head, 0);
  switch (id) {
    case 'RIFF':
    case 'RF64':
    case 'BW64':
      return parseWav(read, fileSize, name, head);
    case 'FORM':
      return parseAiff(read, fileSize, name, head);
    case 'fLaC':
      return parseFlac(read, fileSize, name, 0);
    case 'RIFX':
      throw new InputError("big-endian RIFX files are not supported; expected 'RIFF', 'RF64', 'BW64', 'FORM' or 'fLaC'", name, 0);
    case 'OggS':
      throw new InputError("Ogg files are not supported; expected 'RIFF', 'RF64', 'BW64', 'FORM' or 'fLaC'", name, 0);
  }
  const id3 = id3v2Size(head);
  if (id3 > 0) {
    const after = readExact(read, fileSize, name, id3, 4, 'the audio stream after the ID3v2 tag');
    if (fourcc(after, 0) === 'fLaC') return parseFlac(read, fileSize, name, id3);
    throw new InputError(`expected 'fLaC' after the ID3v2 tag (MP3 and other compressed formats are not supported), found ${showId(fourcc(after, 0))}`, name, id3);
  }
  if (head[0] === 0xff && (head[1]! & 0xe0) === 0xe0) {
    throw new InputError("MPEG audio (MP3) is not supported; expected 'RIFF', 'RF64', 'BW64', 'FORM' or 'fLaC'", name, 0);
  }
  throw new InputError(
    `not a WAV, RF64, AIFF or FLAC file: expected 'RIFF', 'RF64', 'BW64', 'FORM' or 'fLaC' at the start, found ${showId(id)}`,
    name,
    0,
  );
}

/** parseAudioLayout over bytes already in memory (small files, the browser editor, tests). */
export function parseAudioLayoutFromBytes(bytes: Uint8Array, name: string): AudioLayout {
  return parseAudioLayout((offset, length) => bytes.subarray(offset, offset + length), bytes.length, name);
}
