/** Markers and how steps take their values are kept in the session file, and checked when it is read. */
import { describe, expect, it } from 'vitest';
import { parseSession, sessionText } from '../../renderer/src/lib/session-file.ts';
import { StepList } from '../../renderer/src/lib/steps.ts';

const source = { name: 'reel7.wav', path: null, sizeBytes: 1000, audioMd5: '0123456789abcdef0123456789abcdef' };

describe('session: markers and step ranges', () => {
  it('round-trips markers, a step limited to a range, its basis and measure-here (common practice: save/reopen keeps the work)', () => {
    const l = new StepList();
    const e = l.add('unecho', { delaySeconds: 0.012, gain: 0.4 });
    l.setHow(e.id, { rangeSeconds: [5, 8], basis: 'input', measureHere: true });
    const markers = [{ id: 'm1', name: 'Ada begins', seconds: 4.2 }, { id: 'm2', name: 'Loom', seconds: 17 }];
    const s = parseSession(sessionText(source, l.steps, markers));
    expect(s.markers).toEqual(markers);
    expect(s.steps[0]).toMatchObject({ rangeSeconds: [5, 8], basis: 'input', measureHere: true });
    // Undo takes the range off again, in one step.
    l.undo();
    expect(l.steps[0]!.rangeSeconds).toBeUndefined();
    // Older sessions without markers still open.
    const j = JSON.parse(sessionText(source, l.steps));
    delete j.markers;
    expect(parseSession(JSON.stringify(j)).markers).toEqual([]);
  });

  it('refuses malformed markers and ranges with a one-line reason', () => {
    const j = JSON.parse(sessionText(source, []));
    expect(() => parseSession(JSON.stringify({ ...j, markers: [{ id: 'm1', name: 'x', seconds: -1 }] }))).toThrow(/marker 1 is malformed/);
    expect(() => parseSession(JSON.stringify({ ...j, markers: 'x' }))).toThrow(/not a list/);
    const step = { id: 's1', op: 'unecho', params: {}, enabled: true, rangeSeconds: [8, 5] };
    expect(() => parseSession(JSON.stringify({ ...j, steps: [step] }))).toThrow(/step 1 has a malformed range/);
  });
});
