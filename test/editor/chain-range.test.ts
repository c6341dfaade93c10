/**
 * Steps limited to part of the recording (crossfaded at the edges), and markers written as BWF cue
 * points where the corrections move them, read back by an outside reader (npm `wavefile`).
 */
import { describe, expect, it } from 'vitest';
import { WaveFile } from 'wavefile';
import { MemorySource, readAll } from '../../dsp/source.ts';
import { mapTime } from '../../dsp/ops/timing.ts';
import { buildAdtlList, buildCueChunk, parseCuePoints } from '../../dsp/formats/cue.ts';
import { renderInMemory, RANGE_FADE_SECONDS } from '../../renderer/src/worker/pipeline.ts';
import { fileMarkers } from '../../renderer/src/worker/markers.ts';
import { exportInMemory, memoryFileSource } from '../helpers/editor-export.ts';
import { seededRng } from '../helpers/rng.ts';

const RATE = 48000;
const p = { progress() {}, warn() {}, signal: { aborted: false } };

/** Two seconds of band-limited-ish noise with one reflection (y = x + 0.4·x(t − 10 ms)), stereo. */
function material(seconds = 4): Float64Array[] {
  const rng = seededRng(42);
  const n = seconds * RATE, d = 480;
  const x = Float64Array.from({ length: n }, () => (rng() - 0.5) * 0.3);
  const y = Float64Array.from(x, (v, i) => v + (i >= d ? 0.4 * x[i - d]! : 0));
  return [y, Float64Array.from(y, (v) => 0.9 * v)];
}

describe('a step limited to the selection', () => {
  it('keeps everything outside the range bit-exact and matches the whole-file step inside it (away from the fades)', async () => {
    const ch = material();
    const src = new MemorySource(ch, RATE);
    const step = { op: 'unecho', params: { delaySeconds: 0.01, gain: 0.4 } };
    const whole = await readAll((await renderInMemory(src, [step], p)).out);
    const part = await readAll((await renderInMemory(src, [{ ...step, rangeSeconds: [1, 2.5] as const }], p)).out);
    const a = RATE, b = 2.5 * RATE, F = RANGE_FADE_SECONDS * RATE;
    expect(part[0]!.length).toBe(ch[0]!.length);
    let outside = 0, inside = 0;
    for (let c = 0; c < 2; c++) {
      for (let i = 0; i < ch[0]!.length; i++) {
        if (i < a || i >= b) outside = Math.max(outside, Math.abs(part[c]![i]! - ch[c]![i]!));
        else if (i >= a + F && i < b - F) inside = Math.max(inside, Math.abs(part[c]![i]! - whole[c]![i]!));
      }
    }
    // Source: definition (samples outside the range are copied); the 0.5 s margin lets the
    // canceller's recursion settle (0.4^50 of its start-up error is left: exact identity in practice).
    expect(outside).toBe(0);
    expect(inside).toBeLessThan(1e-12);
    // The fades join without a step: no sample-to-sample jump bigger than the signal's own.
    const ownMax = Math.max(...Array.from({ length: 4000 }, (_, i) => Math.abs(ch[0]![i + 1]! - ch[0]![i]!)));
    for (const at of [a, b]) {
      for (let i = at - 4; i < at + F + 4; i++) expect(Math.abs(part[0]![i + 1]! - part[0]![i]!)).toBeLessThan(1.5 * ownMax);
    }
  });

  it('a varispeed on part of the recording lengthens only that part, and the chain map says where everything went', async () => {
    const ch = material();
    const src = new MemorySource(ch, RATE);
    const r = await renderInMemory(src, [{ op: 'varispeed', params: { factor: 0.5 }, rangeSeconds: [1, 2] as const }], p);
    const out = await readAll(r.out);
    // Source: varispeed by 0.5 makes 1 s last 2 s (ARCHITECTURE.md speed factor convention).
    expect(out[0]!.length).toBe(5 * RATE);
    for (let i = 0; i < RATE; i += 997) expect(out[0]![i]).toBe(ch[0]![i]);
    for (let i = 2 * RATE; i < 4 * RATE; i += 997) expect(out[0]![i + RATE]).toBe(ch[0]![i]);
    expect(mapTime(r.segments, 0.5)).toBeCloseTo(0.5, 12);
    expect(mapTime(r.segments, 1.5)).toBeCloseTo(2, 9);
    expect(mapTime(r.segments, 3)).toBeCloseTo(4, 9);
  });

  it('a later step’s range follows an earlier change of time', async () => {
    const ch = material();
    const src = new MemorySource(ch, RATE);
    const r = await renderInMemory(src, [
      { op: 'varispeed', params: { factor: 0.5 } },
      { op: 'reverse', params: {}, rangeSeconds: [1, 2] as const },
    ], p);
    expect(r.reports[1]!.rangeSeconds![0]).toBeCloseTo(2, 9);
    expect(r.reports[1]!.rangeSeconds![1]).toBeCloseTo(4, 9);
  });
});

describe('markers as BWF cue points', () => {
  it('reads a cue chunk written by an outside writer, and exports markers at their corrected places, read back by wavefile', async () => {
    // Source: npm wavefile 11 writes the source's cue point and label (setCuePoint) and reads ours back (listCuePoints).
    const ch = material(3);
    const wf = new WaveFile();
    wf.fromScratch(2, RATE, '24', ch.map((c) => Int32Array.from(c, (v) => Math.round(v * 8388607))));
    wf.setCuePoint({ position: 1000, label: 'Ada begins' });
    const bytes = wf.toBuffer();
    const source = await memoryFileSource(bytes, 'take.wav');
    const found = await fileMarkers(source.layout, async (o, l) => bytes.slice(o, o + l), 'take.wav');
    expect(found.map((m) => [m.name, m.seconds])).toEqual([['Ada begins', 1]]);

    const markers = [...found, { id: 'm9', name: 'Loom noise', seconds: 2.5 }];
    const { bytes: exported, result } = await exportInMemory(bytes, 'take.wav', [{ op: 'varispeed', params: { undo: 1.0293 } }], markers);
    expect(result.cuePoints).toBe(2);
    const back = new WaveFile(exported);
    const cues = back.listCuePoints() as { dwSampleOffset: number; label: string }[];
    // The speed correction makes every instant 1.0293 × later (undo 1.0293 plays at 1/1.0293).
    expect(cues.map((c) => c.label)).toEqual(['Ada begins', 'Loom noise']);
    expect(cues.map((c) => c.dwSampleOffset)).toEqual([Math.round(1 * 1.0293 * RATE), Math.round(2.5 * 1.0293 * RATE)]);
    // One cue chunk only: the source's own is replaced, not copied beside ours.
    const ids: string[] = [];
    for (let at = 12; at + 8 <= exported.length;) {
      const id = String.fromCharCode(...exported.subarray(at, at + 4));
      const size = new DataView(exported.buffer, exported.byteOffset + at + 4, 4).getUint32(0, true);
      ids.push(id);
      at += 8 + size + (size & 1);
    }
    expect(ids.filter((x) => x === 'cue ').length).toBe(1);
  });

  it('parses what it builds (odd and even label lengths, an unlabelled point) and refuses a cue chunk shorter than its count', () => {
    // Source: the cue/adtl layout of the RIFF specification (24-byte cue points; labl = id + zero-terminated text, padded to even).
    const points = [{ id: 1, frame: 0, label: 'Tone' }, { id: 2, frame: 48000 * 61, label: 'Ada, 2nd reel' }, { id: 3, frame: 123456789, label: '' }];
    const cue = buildCueChunk(points), adtl = buildAdtlList(points);
    expect(cue.length).toBe(4 + 24 * 3);
    expect(adtl.length % 2).toBe(0);
    expect(parseCuePoints(cue, adtl)).toEqual(points);
    expect(() => parseCuePoints(Uint8Array.from([5, 0, 0, 0, 1, 2]), null, 'x.wav')).toThrow(/says 5 points/);
  });
});
