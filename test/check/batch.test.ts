/**
 * `reelwright check` end to end: real WAV files written with main/io in a temp folder, analysed by
 * worker threads. Each file carries one known fault (built in, so the expected verdict is known):
 * flutter on a test tone, an inter-channel delay, clipping, an unreadable file, a low-resolution
 * mono file.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { collectAudioFiles, runCheck } from '../../main/check/index.ts';
import type { CheckReport } from '../../main/check/report.ts';
import { writeTestWav } from '../helpers/write-wav.ts';
import { analyses } from '../../dsp/ops/registry.ts';
import { FftPlan } from '../../dsp/core/fft.ts';
import { seededRng, gaussian } from '../helpers/rng.ts';

const FS = 48000;
let dir: string;
let outDir: string;

const writeWav = (file: string, channels: Float64Array[], sampleRateHz = FS, bits: 16 | 24 = 24) => writeTestWav(file, channels, sampleRateHz, bits);

/** Shaped noise "programme" (−3 dB/octave), channel 2 delayed by `delaySeconds` exactly (DFT shift theorem). */
function programme(n: number, delaySeconds: number, rmsGain: number, seed: number): Float64Array[] {
  const g = gaussian(seededRng(seed));
  const plan = new FftPlan(n);
  const spec = plan.createHalfSpectrum();
  plan.realForward(Float64Array.from({ length: n }, () => g()), spec);
  const s2 = new Float64Array(spec.length);
  for (let k = 0; k <= n / 2; k++) {
    const f = (k * FS) / n;
    const gk = k === 0 || k === n / 2 ? 0 : 1 / Math.sqrt(Math.max(1, f / 200));
    spec[2 * k]! *= gk;
    spec[2 * k + 1]! *= gk;
    const ph = -2 * Math.PI * f * delaySeconds;
    s2[2 * k] = spec[2 * k]! * Math.cos(ph) - spec[2 * k + 1]! * Math.sin(ph);
    s2[2 * k + 1] = spec[2 * k]! * Math.sin(ph) + spec[2 * k + 1]! * Math.cos(ph);
  }
  const a = new Float64Array(n), b = new Float64Array(n);
  plan.realInverse(spec, a);
  plan.realInverse(s2, b);
  let p = 0;
  for (const v of a) p += v * v;
  const k = rmsGain / Math.sqrt(p / n);
  for (let i = 0; i < n; i++) {
    a[i]! *= k;
    b[i]! *= k;
  }
  return [a, b];
}

beforeAll(async () => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-check-'));
  outDir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-check-out-'));
  // side-a: 8 s of a 3150 Hz tone with 0.15 % flutter at 4 Hz, then programme: flutter warns (≥ 0.1 %).
  const tone = new Float64Array(12 * FS);
  for (let i = 0; i < 8 * FS; i++) {
    const t = i / FS;
    tone[i] = 0.25 * Math.sin(2 * Math.PI * 3150 * t + ((0.0015 * 3150) / 4) * Math.sin(2 * Math.PI * 4 * t));
  }
  const prog = programme(1 << 18, 0, 0.05, 1);
  tone.set(prog[0]!.subarray(0, 4 * FS), 8 * FS);
  await writeWav(path.join(dir, 'reel-01', 'side-a.wav'), [tone, tone]);
  // side-b: programme with channel 2 40 µs late: azimuth fails (≥ 25 µs).
  await writeWav(path.join(dir, 'reel-01', 'side-b.wav'), programme(1 << 18, 40e-6, 0.05, 2));
  // clipped: programme driven into full scale.
  const hot = programme(1 << 18, 0, 0.6, 3).map((c) => c.map((v) => Math.max(-1, Math.min(1, v))));
  await writeWav(path.join(dir, 'reel-02', 'clipped.wav'), hot);
  // broken: not audio at all; notes and hidden files are not audio files.
  fs.writeFileSync(path.join(dir, 'reel-02', 'broken.wav'), 'this is not a WAV file');
  fs.writeFileSync(path.join(dir, 'reel-02', 'notes.txt'), 'side A has a splice at 2:10');
  fs.writeFileSync(path.join(dir, 'reel-02', '._clipped.wav'), 'AppleDouble');
  // mono, 44.1 kHz, 16-bit: below the archive resolution rules (warn); azimuth does not apply.
  await writeWav(path.join(dir, 'reel-03', 'mono.wav'), [programme(1 << 17, 0, 0.05, 4)[0]!], 44100, 16);
}, 60_000);

afterAll(() => {
  fs.rmSync(dir, { recursive: true, force: true });
  fs.rmSync(outDir, { recursive: true, force: true });
});

describe('reelwright check over a folder', () => {
  const out: string[] = [], err: string[] = [];
  const opts = { out: (s: string) => void out.push(s), err: (s: string) => void err.push(s) };
  const json = () => JSON.parse(fs.readFileSync(path.join(outDir, 'r.json'), 'utf8')) as CheckReport;
  const byName = (r: CheckReport, name: string) => r.files.find((f) => f.file.path.endsWith(name))!;

  it('checks every audio file in check processes and exits 1 when any fails', async () => {
    const code = await runCheck(
      [dir, '--json', path.join(outDir, 'r.json'), '--csv', path.join(outDir, 'r.csv'), '--report', path.join(outDir, 'r.html'), '--jobs', '2', '--quiet'],
      opts,
    );
    expect(code).toBe(1);
    const r = json();
    expect(r.files.map((f) => path.relative(dir, f.file.path))).toEqual([
      'reel-01/side-a.wav', 'reel-01/side-b.wav', 'reel-02/broken.wav', 'reel-02/clipped.wav', 'reel-03/mono.wav',
    ]);
    const a = byName(r, 'side-a.wav'), b = byName(r, 'side-b.wav'), c = byName(r, 'clipped.wav'), x = byName(r, 'broken.wav'), m = byName(r, 'mono.wav');
    expect(a.status).toBe('warn');
    expect(a.reasons![0]).toMatch(/^warn: wow and flutter \(weighted\) 0\.1[45]\d %/);
    expect(b.status).toBe('fail');
    expect(b.reasons).toEqual([expect.stringMatching(/^fail: inter-channel delay 4\d\.\d µs ≥ 25\.0 µs$/)]);
    expect(Math.abs((b.azimuth as { delaySeconds: number }).delaySeconds - 40e-6)).toBeLessThan(0.5e-6);
    expect(b.notes.some((n) => n.op === 'flutter' && /no steady test tone/.test(n.reason))).toBe(true);
    expect(c.status).toBe('fail');
    expect(c.reasons!.some((s) => /^fail: clipped runs \d+ ≥ 10$/.test(s))).toBe(true);
    expect(x.status).toBe('fail');
    expect(x.error).toMatch(/too short|not a|WAV/);
    expect(m.status).toBe('warn');
    expect(m.reasons).toEqual(['warn: sample rate 44100 Hz < 48000 Hz', 'warn: word length 16 bits < 24 bits']);
    expect(m.notes.some((n) => n.op === 'azimuth' && n.reason === 'does not apply to this file')).toBe(true);
    expect(a.file.audioMd5).toMatch(/^[0-9a-f]{32}$/);
    expect(r.summary).toMatchObject({ files: 5, pass: 0, warn: 2, fail: 3, resumed: 0 });
    expect(out.at(-1)).toMatch(/^5 files: 0 pass, 2 warn, 3 fail in/);

    // Every registered analysis that applies left its section or a note saying why not, so new
    // analyses (speed, echo, reversed…) appear in the report as soon as they are registered.
    for (const op of analyses().filter((o) => o.inDiagnose !== false)) {
      expect(op.key in b || b.notes.some((n) => n.op === op.name), op.name).toBe(true);
    }

    const csv = fs.readFileSync(path.join(outDir, 'r.csv'), 'utf8').split('\r\n');
    expect(csv.length).toBe(7);
    expect(csv[0]!.startsWith('path,status,reasons,error,')).toBe(true);
    const html = fs.readFileSync(path.join(outDir, 'r.html'), 'utf8');
    expect(html).toContain(`reelwright align ${path.join(dir, 'reel-01', 'side-b.wav')}`);
    expect((html.match(/<svg /g) ?? []).length).toBeGreaterThanOrEqual(4 * 2);
  }, 120_000);

  it('--resume takes over unchanged files, re-checks changed ones, and new thresholds re-judge them', async () => {
    const before = json();
    // Change one file's audio.
    await writeWav(path.join(dir, 'reel-03', 'mono.wav'), [programme(1 << 17, 0, 0.02, 5)[0]!], 44100, 16);
    const thr = path.join(outDir, 'relaxed.json');
    fs.writeFileSync(thr, JSON.stringify({ 'azimuth.delayMicroseconds': null, 'levels.clippedRuns': { failAt: 100000 }, 'levels.truePeakDbtp': null, 'file.unreadable': { warnAt: 1 } }));
    out.length = 0;
    const code = await runCheck([dir, '--json', path.join(outDir, 'r.json'), '--resume', '--thresholds', thr, '--jobs', '1', '--quiet'], opts);
    const r = json();
    expect(r.summary.resumed).toBe(3);
    expect(byName(r, 'mono.wav').resumed).toBeUndefined();
    expect(byName(r, 'mono.wav').file.audioMd5).not.toBe(byName(before, 'mono.wav').file.audioMd5);
    expect(byName(r, 'side-b.wav').resumed).toBe(true);
    expect(byName(r, 'side-b.wav').azimuth).toEqual(byName(before, 'side-b.wav').azimuth);
    expect(byName(r, 'side-b.wav').status).toBe('pass');
    expect(byName(r, 'broken.wav').status).toBe('warn');
    expect(r.files.filter((f) => f.status === 'fail').map((f) => [f.file.path, f.reasons])).toEqual([]);
    expect(code).toBe(0);
  }, 120_000);

  it('lists audio files once each, skipping hidden, AppleDouble and non-audio files', () => {
    const files = collectAudioFiles([dir, path.join(dir, 'reel-01', 'side-a.wav'), dir + path.sep + '.']);
    expect(files.map((f) => path.relative(dir, path.resolve(f))).sort()).toEqual([
      'reel-01/side-a.wav', 'reel-01/side-b.wav', 'reel-02/broken.wav', 'reel-02/clipped.wav', 'reel-03/mono.wav',
    ]);
  });

  it('says so when there is nothing to check (exit 2)', async () => {
    const empty = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-empty-'));
    fs.writeFileSync(path.join(empty, 'list.txt'), 'no audio here');
    err.length = 0;
    expect(await runCheck([empty], opts)).toBe(2);
    expect(err.join('\n')).toMatch(/no audio files .* found in/);
    expect(await runCheck([path.join(empty, 'missing')], opts)).toBe(2);
    expect(await runCheck([dir, '--jobs', '0'], opts)).toBe(2);
    expect(await runCheck([dir, '--resume'], opts)).toBe(2);
    fs.rmSync(empty, { recursive: true, force: true });
  });
});
