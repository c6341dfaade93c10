/** Session files: what is saved reads back, and damaged files are refused with a reason. */
import { describe, expect, it } from 'vitest';
import { parseSession, sessionText } from '../../renderer/src/lib/session-file.ts';

const source = { name: 'reel-14.wav', path: '/archive/reel-14.wav', sizeBytes: 1234, audioMd5: '0123456789abcdef0123456789abcdef' };
const steps = [{ id: 's1', op: 'unecho', params: { delaySeconds: 0.021, gain: 0.4 }, enabled: true, because: { op: 'echo', title: 'One reflection' } }];

describe('session file', () => {
  it('round-trips the source and the steps', () => {
    const s = parseSession(sessionText(source, steps));
    expect(s.source).toEqual(source);
    expect(s.steps).toEqual(steps);
  });
  it('refuses other files with a one-line reason', () => {
    expect(() => parseSession('RIFF')).toThrow(/not JSON/);
    expect(() => parseSession('{"kind":"x"}')).toThrow(/not a Reelwright session/);
    const j = JSON.parse(sessionText(source, steps));
    expect(() => parseSession(JSON.stringify({ ...j, version: 2 }))).toThrow(/version 2/);
    expect(() => parseSession(JSON.stringify({ ...j, source: { ...source, audioMd5: 'xyz' } }))).toThrow(/incomplete/);
    expect(() => parseSession(JSON.stringify({ ...j, steps: [{ op: 'unecho' }] }))).toThrow(/step 1 is malformed/);
  });
});
