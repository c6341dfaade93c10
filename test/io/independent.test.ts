import { describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { readAll } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/reader.ts';
import { FIXTURES } from './helpers.ts';

interface Expected {
  file: string;
  writer: string;
  sampleRateHz: number;
  bitsPerSample: number;
  sampleFormat: 'int' | 'float';
  channels: number[][];
}

const load = (name: string) => JSON.parse(fs.readFileSync(path.join(FIXTURES, name + '.json'), 'utf8')) as Expected;

/**
 * Fixtures written by independent general-purpose writers (test/fixtures/io/make_fixtures.py and
 * make-wavefile-fixtures.mjs); the expected values were read back by the same library.
 */
const CASES: [string, string][] = [
  ['wave_8bit.wav', 'WAV'],
  ['wave_16bit.wav', 'WAV'],
  ['wave_24bit.wav', 'WAV'],
  ['scipy_int16.wav', 'WAV'],
  ['scipy_int32.wav', 'WAV'],
  ['scipy_float32.wav', 'WAV'],
  ['scipy_float64.wav', 'WAV'],
  ['aifc_8bit.aiff', 'AIFF'],
  ['aifc_16bit.aiff', 'AIFF'],
  ['aifc_24bit.aiff', 'AIFF'],
  ['aifc_none_16bit.aifc', 'AIFC'],
  ['aifc_sowt_16bit.aifc', 'AIFC'],
  ['wavefile_24bit_bwf.wav', 'BWF'],
  ['wavefile_32float.wav', 'WAV'],
  ['chunks_bwf.wav', 'BWF'],
];

describe('files from independent writers decode to the values those libraries read back', () => {
  for (const [name, format] of CASES) {
    it(`${name}`, async () => {
      const want = load(name);
      // Source: the writer named in the fixture JSON (Python wave / aifc, scipy.io.wavfile 1.17,
      // npm wavefile 11.0.0, or a hand-assembled RIFF layout) — exact equality of every sample.
      const audio = await openAudio(path.join(FIXTURES, name));
      try {
        expect(audio.info.format, want.writer).toBe(format);
        expect(audio.sampleRateHz).toBe(want.sampleRateHz);
        expect(audio.bitsPerSample).toBe(want.bitsPerSample);
        expect(audio.sampleFormat).toBe(want.sampleFormat);
        expect(audio.channelCount).toBe(want.channels.length);
        expect(audio.frames).toBe(want.channels[0]!.length);
        const got = await readAll(audio);
        for (let c = 0; c < want.channels.length; c++) expect(Array.from(got[c]!), `channel ${c}`).toEqual(want.channels[c]);
      } finally {
        await audio.close();
      }
    });
  }

  it('wavefile\'s bext and cue chunks are read: fields and CodingHistory as written', async () => {
    // Source: values passed to npm wavefile 11.0.0 in make-wavefile-fixtures.mjs (EBU Tech 3285 layout).
    const audio = await openAudio(path.join(FIXTURES, 'wavefile_24bit_bwf.wav'));
    const b = audio.bext!;
    expect(b.description).toBe('Dictation cylinder 7, Ashgrove parish recordings');
    expect(b.originator).toBe('Ashgrove Heritage Trust');
    expect(b.originatorReference).toBe('AHT-CYL-0007');
    expect(b.originationDate).toBe('2021-09-30');
    expect(b.originationTime).toBe('10:11:12');
    expect(b.timeReference).toBe(96000 * 3600);
    expect(b.version).toBe(1);
    expect(audio.codingHistory).toBe('A=ANALOGUE,M=mono,T=cylinder phonograph\r\nA=PCM,F=96000,W=24,M=stereo,T=transfer\r\n');
    expect(audio.info.chunks).toEqual(expect.arrayContaining(['bext', 'fmt ', 'cue ', 'iXML', 'data']));
    await audio.close();
  });

  it('scipy float32 values beyond full scale and tiny values survive unchanged', async () => {
    // Source: scipy.io.wavfile writes IEEE float samples as given (no clipping); values from the fixture.
    const audio = await openAudio(path.join(FIXTURES, 'scipy_float32.wav'));
    const got = await readAll(audio);
    expect(got[1]![1]).toBe(-2.5);
    expect(got[0]![1]).toBe(Math.fround(1e-30));
    expect(audio.layout.formatTag).toBe(3);
    await audio.close();
  });
});
