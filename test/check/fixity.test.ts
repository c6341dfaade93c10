/**
 * Fixity in `reelwright check`: the SHA-256 of every file, and checksum manifests (write one,
 * verify one: missing, changed and unlisted files). The reference for the checksums and for the
 * manifest's format is GNU coreutils `sha256sum` (a manifest we write must pass `sha256sum -c`),
 * and the FIPS 180-2 test vector.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCheck } from '../../main/check/index.ts';
import { fileSha256, formatManifest, parseManifest } from '../../main/check/fixity.ts';
import type { CheckReport } from '../../main/check/report.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { gaussian, seededRng } from '../helpers/rng.ts';

let dir: string;
const out: string[] = [], err: string[] = [];
// In this thread (no worker threads): the same per-file check, quicker for small files.
const opts = { out: (s: string) => void out.push(s), err: (s: string) => void err.push(s), opener: openAudio };

async function noiseWav(file: string, seed: number, seconds = 0.5): Promise<void> {
  fs.mkdirSync(path.dirname(file), { recursive: true });
  const g = gaussian(seededRng(seed));
  const n = Math.round(seconds * 48000);
  const c = [Float64Array.from({ length: n }, () => 0.05 * g()), Float64Array.from({ length: n }, () => 0.05 * g())];
  async function* blocks() {
    yield c;
  }
  await writeAudio(file, { sampleRateHz: 48000, channelCount: 2, blocks: blocks() }, { bitsPerSample: 24, sampleFormat: 'int', dither: false, overwrite: true });
}

const sha256sum = (file: string) => spawnSync('sha256sum', [file], { encoding: 'utf8' }).stdout.split(' ')[0];

beforeAll(async () => {
  dir = fs.realpathSync(fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-fixity-')));
  await noiseWav(path.join(dir, 'bag', 'data', 'reel-01', 'side-a.wav'), 1);
  await noiseWav(path.join(dir, 'bag', 'data', 'reel-01', 'side-b.wav'), 2);
  await noiseWav(path.join(dir, 'bag', 'data', 'reel 02 % copy.wav'), 3);
  fs.writeFileSync(path.join(dir, 'bag', 'data', 'notes.txt'), 'transfer notes: splice at 2:10\n');
});

afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

describe('SHA-256 and manifests', () => {
  it('hashes files as sha256sum does', () => {
    const abc = path.join(dir, 'abc');
    fs.writeFileSync(abc, 'abc');
    // Source: FIPS 180-2, Appendix B.1 (SHA-256 of "abc").
    expect(fileSha256(abc)).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    const empty = path.join(dir, 'empty');
    fs.writeFileSync(empty, '');
    expect(fileSha256(empty)).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
    const wav = path.join(dir, 'bag', 'data', 'reel-01', 'side-a.wav');
    expect(fileSha256(wav)).toBe(sha256sum(wav));
  });

  it('reads and writes the BagIt / sha256sum line format, percent-encoding only %, CR and LF', () => {
    // Source: RFC 8493 §2.1.3.
    const lines = [
      { sha256: 'a'.repeat(64), relPath: 'data/b.wav' },
      { sha256: 'b'.repeat(64), relPath: 'data/50% copy\nnew.wav' },
    ];
    const text = formatManifest(lines);
    expect(text).toBe(`${'b'.repeat(64)}  data/50%25 copy%0Anew.wav\n${'a'.repeat(64)}  data/b.wav\n`);
    expect(parseManifest(text, 'm')).toEqual([lines[1], lines[0]]);
    // sha256sum's binary mark, upper-case hex, CRLF line ends and blank lines are read.
    expect(parseManifest(`${'C'.repeat(64)} *data/x.wav\r\n\r\n`, 'm')).toEqual([{ sha256: 'c'.repeat(64), relPath: 'data/x.wav' }]);
    expect(() => parseManifest(`${'a'.repeat(63)}  data/x.wav\n`, 'm.txt')).toThrow(/m\.txt: line 1: a SHA-256 checksum has 64 hex digits, found 63/);
    expect(() => parseManifest(`${'a'.repeat(64)}  ../x.wav\n`, 'm.txt')).toThrow(/not a path inside/);
    expect(() => parseManifest(`${'a'.repeat(64)}  x.wav\n${'b'.repeat(64)}  x.wav\n`, 'm.txt')).toThrow(/line 2: x\.wav is listed twice/);
    expect(() => parseManifest('no checksum here\n', 'm.txt')).toThrow(/line 1: expected "CHECKSUM  PATH"/);
  });

  it('check --write-manifest lists every file under the checked folders, and sha256sum -c accepts it', async () => {
    const manifest = path.join(dir, 'bag', 'manifest-sha256.txt');
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--write-manifest', manifest, '--json', path.join(dir, 'first.json'), '--quiet'], opts)).toBe(0);
    const text = fs.readFileSync(manifest, 'utf8');
    expect(text.split('\n').filter(Boolean).map((l) => l.slice(66))).toEqual(['data/notes.txt', 'data/reel 02 %25 copy.wav', 'data/reel-01/side-a.wav', 'data/reel-01/side-b.wav']);
    // sha256sum knows no %-encoding: check the lines without a "%" in the name.
    const plain = path.join(dir, 'bag', 'plain.txt');
    fs.writeFileSync(plain, text.split('\n').filter((l) => l && !l.includes('%')).join('\n') + '\n');
    const c = spawnSync('sha256sum', ['-c', 'plain.txt'], { cwd: path.join(dir, 'bag'), encoding: 'utf8' });
    fs.rmSync(plain);
    expect(c.status, c.stderr).toBe(0);
    expect(c.stdout.trim().split('\n')).toEqual(['data/notes.txt: OK', 'data/reel-01/side-a.wav: OK', 'data/reel-01/side-b.wav: OK']);
    // Every entry carries the file's SHA-256.
    const r = JSON.parse(fs.readFileSync(path.join(dir, 'first.json'), 'utf8')) as CheckReport;
    for (const f of r.files) expect(f.file.sha256).toBe(sha256sum(f.file.path));
    // A manifest is never replaced, and must sit above every file it lists.
    err.length = 0;
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--write-manifest', manifest], opts)).toBe(2);
    expect(err.join('\n')).toMatch(/the file exists; a manifest is a fixity record and is never replaced/);
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--write-manifest', path.join(dir, 'bag', 'data', 'reel-01', 'manifest-sha256.txt')], opts)).toBe(2);
    expect(err.join('\n')).toMatch(/lies outside the manifest's folder/);
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--write-manifest', path.join(dir, 'manifest-md5.txt')], opts)).toBe(2);
    expect(err.join('\n')).toMatch(/only SHA-256 manifests are supported/);
  });

  it('check --manifest verifies every listed file and reports missing, changed and unlisted ones', async () => {
    const manifest = path.join(dir, 'bag', 'manifest-sha256.txt');
    const json = path.join(dir, 'verify.json');
    out.length = 0;
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--manifest', manifest, '--json', json, '--quiet'], opts)).toBe(0);
    let r = JSON.parse(fs.readFileSync(json, 'utf8')) as CheckReport;
    expect(r.manifest).toEqual({ path: manifest, algorithm: 'sha256', listed: 4, verified: 4, missing: [], changed: [], extra: [] });
    expect(r.files.map((f) => f.manifest)).toEqual(['match', 'match', 'match']);
    expect(out.at(-1)).toMatch(/^3 files: 3 pass, 0 warn, 0 fail; manifest: 4 of 4 verified, 0 missing, 0 changed, 0 not listed in/);

    // One file changed, the notes gone, a new take added.
    await noiseWav(path.join(dir, 'bag', 'data', 'reel-01', 'side-b.wav'), 20);
    fs.rmSync(path.join(dir, 'bag', 'data', 'notes.txt'));
    await noiseWav(path.join(dir, 'bag', 'data', 'reel-01', 'side-c.wav'), 4);
    out.length = 0;
    const csv = path.join(dir, 'verify.csv'), html = path.join(dir, 'verify.html');
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--manifest', manifest, '--json', json, '--csv', csv, '--report', html, '--quiet'], opts)).toBe(1);
    r = JSON.parse(fs.readFileSync(json, 'utf8')) as CheckReport;
    const sideB = path.join(dir, 'bag', 'data', 'reel-01', 'side-b.wav');
    expect(r.manifest).toMatchObject({ listed: 4, verified: 2, missing: ['data/notes.txt'], extra: ['data/reel-01/side-c.wav'] });
    expect(r.manifest!.changed).toEqual([{ path: 'data/reel-01/side-b.wav', expectedSha256: expect.stringMatching(/^[0-9a-f]{64}$/), actualSha256: sha256sum(sideB) }]);
    const by = (name: string) => r.files.find((f) => f.file.path.endsWith(name))!;
    expect([by('side-b.wav').status, by('side-b.wav').reasons]).toEqual(['fail', ['fail: SHA-256 differs from the manifest']]);
    expect([by('side-c.wav').status, by('side-c.wav').reasons]).toEqual(['warn', ['warn: not listed in the manifest']]);
    expect(by('side-a.wav').status).toBe('pass');
    expect(out).toContain(`MISSING  data/notes.txt  (listed in ${manifest})`);
    const rows = fs.readFileSync(csv, 'utf8').split('\r\n');
    const header = rows[0]!.split(',');
    const row = rows.find((l) => l.startsWith(sideB))!.split(',');
    expect(row[header.indexOf('sha256')]).toBe(sha256sum(sideB));
    expect(row[header.indexOf('manifest')]).toBe('changed');
    expect(fs.readFileSync(html, 'utf8')).toMatch(/Missing: listed but not found \(1\)<\/h3><ul class="findings"><li>data\/notes\.txt<\/li>/);
    // --resume does not carry an earlier run's manifest status into a run without --manifest.
    expect(await runCheck([path.join(dir, 'bag', 'data'), '--json', json, '--resume', '--quiet'], opts)).toBe(0);
    r = JSON.parse(fs.readFileSync(json, 'utf8')) as CheckReport;
    expect(r.manifest).toBeUndefined();
    expect(r.files.every((f) => f.manifest === undefined && f.status === 'pass')).toBe(true);
  });
});
