/** The bridge's argument validation (every IPC call the main process accepts) and the sender check. */
import { describe, expect, it } from 'vitest';
import { BridgeArgumentError, MAX_CHUNK_BYTES, bridgeCalls, isTrustedSenderUrl, validateCall, validators } from '../../main/bridge/validate.ts';

const ok = (call: string, args: unknown[]) => validateCall(call, args).args;
const bad = (call: string, args: unknown[], msg: RegExp) => expect(() => validateCall(call, args)).toThrow(msg);

describe('bridge argument validation', () => {
  it('has a validator for every call of the Bridge interface', () => {
    expect(bridgeCalls.sort()).toEqual(['abortExport', 'beginExport', 'closeFile', 'dropped', 'finishExport', 'launched', 'openDemo', 'openSession',
      'pickAudioFile', 'readBytes', 'reopenSource', 'saveSession', 'writeExport'].sort());
    expect(Object.keys(validators)).not.toContain('mode');
  });

  it('accepts well-formed calls unchanged', () => {
    expect(ok('readBytes', ['f-abc123', 0, 4096])).toEqual(['f-abc123', 0, 4096]);
    expect(ok('beginExport', ['take 3 (restored).wav', 'f-1'])).toEqual(['take 3 (restored).wav', 'f-1']);
    expect(ok('reopenSource', [null, 'a.WAV'])).toEqual([null, 'a.WAV']);
    expect(ok('openDemo', [])).toEqual([]);
    const buf = new Uint8Array([1, 2, 3]);
    const [, bytes, at] = ok('writeExport', ['x-9', buf, null]);
    expect(new Uint8Array(bytes as ArrayBuffer)).toEqual(buf);
    expect(at).toBeNull();
  });

  it('refuses unknown calls, wrong argument counts and wrong types', () => {
    bad('deleteEverything', [], /unknown call/);
    bad('openDemo', [1], /expected 0 arguments/);
    bad('readBytes', ['f-1', 0], /expected 3 arguments/);
    bad('readBytes', ['../etc/passwd', 0, 10], /not a file handle/);
    bad('readBytes', ['x-1', 0, 10], /not a file handle/);
    bad('readBytes', ['f-1', -1, 10], /offset must be a whole number/);
    bad('readBytes', ['f-1', 1.5, 10], /offset must be a whole number/);
    bad('readBytes', ['f-1', 0, MAX_CHUNK_BYTES + 1], /length must be a whole number/);
    bad('readBytes', ['f-1', '0', 10], /offset/);
    bad('writeExport', ['f-1', new ArrayBuffer(1), null], /not a export handle/);
    bad('writeExport', ['x-1', 'text', null], /bytes must be an ArrayBuffer/);
    bad('writeExport', ['x-1', new ArrayBuffer(MAX_CHUNK_BYTES + 1), null], /at most/);
    bad('saveSession', [{}, 'a.json'], /session must be text/);
    bad('reopenSource', ['', 'a.wav'], /path must be null/);
    bad('reopenSource', ['/a\u0000b', 'a.wav'], /path must be null/);
  });

  it('accepts only bare file names with the right extension', () => {
    for (const name of ['../x.wav', 'a/b.wav', 'a\\b.wav', 'C:x.wav', '.hidden.wav', ' x.wav', 'x.txt', '', 'a\nb.wav', 'x'.repeat(201) + '.wav']) {
      expect(() => validateCall('beginExport', [name, 'f-1']), name).toThrow(BridgeArgumentError);
    }
    bad('saveSession', ['{}', 'session.wav'], /must end with \.rwsession or \.json/);
  });

  it('takes a dropped file as one absolute path naming a recording or a session', () => {
    // The preload sends the path webUtils.getPathForFile gave for the dropped File.
    for (const p of ['/home/a/take 3.wav', '/x/y.FLAC', '/x/reel.aifc', '/x/s.rwsession', '/x/old.session.json', 'C:\\Users\\a\\take.wav', 'D:/t.bwf', '\\\\server\\share\\t.rf64']) {
      expect(ok('dropped', [p]), p).toEqual([p]);
    }
    bad('dropped', [], /expected 1 argument/);
    bad('dropped', ['/a.wav', '/b.wav'], /expected 1 argument/);
    bad('dropped', [{ path: '/a.wav' }], /path must be a non-empty path/);
    bad('dropped', [''], /path must be a non-empty path/);
    bad('dropped', ['/a\u0000b.wav'], /path must be a non-empty path/);
    bad('dropped', ['/' + 'x'.repeat(4096) + '.wav'], /path must be a non-empty path/);
    bad('dropped', ['take.wav'], /not an absolute path/);
    bad('dropped', ['../take.wav'], /not an absolute path/);
    bad('dropped', ['C:take.wav'], /not an absolute path/);
    bad('dropped', ['/home/a/notes.txt'], /notes\.txt is neither a recording \(\.wav.*\) nor a session \(\.rwsession, \.json\)/);
    bad('dropped', ['/home/a/'], /is neither a recording/);
  });

  it('trusts only the editor page as sender', () => {
    const trusted = [{ protocol: 'reelwright:', host: 'editor' }];
    expect(isTrustedSenderUrl('reelwright://editor/index.html', trusted)).toBe(true);
    for (const u of ['reelwright://other/index.html', 'https://editor/index.html', 'file:///tmp/index.html', 'reelwright://user:pw@editor/', 'not a url', '']) {
      expect(isTrustedSenderUrl(u, trusted), u).toBe(false);
    }
  });
});
