/**
 * Echo and print-through on real recordings: small clips built at test time from recorded samples
 * (test/echo/real_clips.py: the Fluid R3 GM soundfont through fluidsynth with its reverb and chorus
 * off, the Festival kal diphone voice), impairments applied exactly with numpy (DFT shift theorem;
 * print-through as an attenuated, low-passed, delayed copy). Nothing large is committed.
 *
 * The cases are the failures seen on real material (the analyses issue and the corrections issue):
 * a bass note's period and a low piano note taken for reflections or print-through, the strummed
 * guitar's own repetition reported as print-through at −10…−18 dB, a −40 dB pre-echo before a piano
 * entry after digital silence missed, and automatic unecho cancelling a faint copy while leaving
 * the reflection, or under-reading a reflection at two pitch periods of a voice.
 */
import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { analyseEcho } from '../../dsp/echo/detect.ts';
import { echo } from '../../dsp/ops/echo.ts';
import { unecho } from '../../dsp/ops/unecho.ts';
import { silentContext } from '../../dsp/ops/types.ts';
import { collectBlocks, MemorySource } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/reader.ts';
import { aptInstall } from '../setup/system-tools.ts';
import { bandLevelsDb, residualRatioDb } from './util.ts';

interface Truth {
  rateHz: number;
  clean?: boolean;
  pitchPeriodSeconds?: number;
  reflection?: { delaySeconds: number; gain: number };
  printThrough?: { delaySeconds: number; levelDb: number };
}

let dir = '';
let truth: Record<string, Truth> = {};

/** The Debian packages the clips are rendered from. */
const NEEDS: ReadonlyArray<readonly [string, string]> = [
  ['/usr/bin/fluidsynth', 'fluidsynth'],
  ['/usr/share/sounds/sf2/FluidR3_GM.sf2', 'fluid-soundfont-gm'],
  ['/usr/bin/text2wave', 'festival'],
  ['/usr/share/festival/voices/english/kal_diphone', 'festvox-kallpc16k'],
];

beforeAll(() => {
  const missing = [...new Set(NEEDS.filter(([f]) => !fs.existsSync(f)).map(([, p]) => p))];
  if (missing.length) aptInstall(missing, 'the real-material echo tests');
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-echo-real-'));
  execFileSync('python3', [path.join(import.meta.dirname, 'real_clips.py'), dir], { stdio: ['ignore', 'ignore', 'inherit'] });
  truth = JSON.parse(fs.readFileSync(path.join(dir, 'truth.json'), 'utf8'));
  return () => fs.rmSync(dir, { recursive: true, force: true });
}, 240_000);

async function load(name: string): Promise<{ source: MemorySource; x: Float64Array; fs: number }> {
  const file = await openAudio(path.join(dir, `${name}.wav`));
  try {
    const [x] = await collectBlocks(file.blocks(), 1);
    return { source: new MemorySource([x!], file.sampleRateHz), x: x!, fs: file.sampleRateHz };
  } finally {
    await file.close();
  }
}

describe('clean real recordings: no reflection, no print-through', () => {
  for (const name of ['bass-c2', 'piano-a#1', 'guitar-strum', 'voice-clean', 'voice44-clean', 'piano-entry-clean', 'drums-clean']) {
    it(name, async () => {
      // Source: nothing was added to these recordings (real_clips.py); a note's period, a strum
      // repeated every bar and a voice's own colouring are not echoes (REAL-MATERIAL.md, common
      // practice). present may be null (not determined), never true; the JSON never prints a
      // delay or level for what it does not claim.
      const { source } = await load(name);
      const r = await analyseEcho(source);
      const j = echo.toJson!(r) as { echo: Record<string, unknown>; printThrough: Record<string, unknown> };
      expect(j.echo.present).not.toBe(true);
      expect(j.printThrough.present).not.toBe(true);
      expect(j.echo.delaySeconds).toBeNull();
      expect(j.printThrough.levelDb).toBeNull();
      expect(r.reflection.confidence).toBeLessThan(0.5);
      expect(r.printThrough.confidence).toBeLessThan(0.5);
    }, 60_000);
  }
});

describe('impaired real recordings', () => {
  it('finds a reflection at two pitch periods of a real voice (delay ≤ 0.1 sample, gain ≤ 0.01) and cancels it by ≥ 30 dB', async () => {
    // Source: y = x + 0.42·x(t − 2P), P the voice's median pitch period, by the DFT shift theorem
    // (real_clips.py); bars of the analyses and corrections issues.
    const t = truth['voice-2periods']!;
    const { source, x: y, fs } = await load('voice-2periods');
    const { x } = await load('voice-clean');
    const r = await analyseEcho(source);
    expect(r.reflection.present).toBe(true);
    expect(Math.abs(r.reflection.delaySeconds! - t.reflection!.delaySeconds) * fs).toBeLessThanOrEqual(0.1);
    expect(Math.abs(r.reflection.gain! - t.reflection!.gain)).toBeLessThanOrEqual(0.01);
    const rendering = await unecho.prepare(source, {}, silentContext);
    const [out] = await collectBlocks(rendering.blocks, 1);
    const left = residualRatioDb(out!, y, x);
    console.info(`voice, 2 periods (${(t.reflection!.delaySeconds * 1e3).toFixed(3)} ms / 0.42): g ${r.reflection.gain!.toFixed(4)}, echo left ${left.toFixed(1)} dB`);
    expect(left).toBeLessThanOrEqual(-30);
  }, 120_000);

  it('finds a 13 ms / −0.45 reflection on a real voice resampled from 16 to 44.1 kHz (delay ≤ 0.1 sample, gain ≤ 0.01)', async () => {
    // Source: y = x − 0.45·x(t − 13 ms) by the DFT shift theorem on the resampled voice
    // (real_clips.py; scipy resample_poly); bars of the analyses issue. Above 8 kHz the file holds
    // only rounding noise, which carries no echo: taking the full-band echo model out of a frame
    // left its opposite at τ, and nearly every frame passed for one whose period is τ.
    const t = truth['voice44-refl']!;
    const { source, fs } = await load('voice44-refl');
    const r = await analyseEcho(source, { printThrough: false });
    expect(r.reflection.present).toBe(true);
    expect(r.reflection.evidence!.locked).toBeLessThanOrEqual(0.1 * r.reflection.evidence!.frames);
    expect(Math.abs(r.reflection.delaySeconds! - t.reflection!.delaySeconds) * fs).toBeLessThanOrEqual(0.1);
    expect(Math.abs(r.reflection.gain! - t.reflection!.gain)).toBeLessThanOrEqual(0.01);
  }, 120_000);

  it('with a reflection and a faint print-through, unecho cancels the reflection first and says so', async () => {
    // Source: y = x + 0.35·x(t − 13.1 ms) + a −45 dB copy 1.1 s before, low-passed at 4 kHz
    // (real_clips.py): the corrections issue's case, where the faint copy was cancelled and the
    // reflection left. The reflection's energy is what must go (≥ 30 dB); the band stays flat
    // (±0.5 dB in third octaves, IEC 61260 layout, where the programme is within 50 dB of its peak).
    const { source, x: y, fs } = await load('voice-refl-pt');
    const { x } = await load('voice-clean');
    const rendering = await unecho.prepare(source, {}, silentContext);
    expect(String(rendering.resolved.cancelled)).toMatch(/^reflection 13\.1\d* ms/);
    expect(rendering.resolved.delaySeconds as number).toBeCloseTo(0.0131, 5);
    const [out] = await collectBlocks(rendering.blocks, 1);
    const left = residualRatioDb(out!, y, x);
    const bx = bandLevelsDb(x, fs), bo = bandLevelsDb(out!, fs);
    const top = Math.max(...bx);
    const worst = Math.max(...bx.map((v, i) => (v > top - 50 && 1000 * Math.pow(10, (i - 10) / 10) < 0.45 * fs ? Math.abs(bo[i]! - v) : 0)));
    console.info(`voice, 13.1 ms / 0.35 + print-through: cancelled "${rendering.resolved.cancelled}", echo left ${left.toFixed(1)} dB, band within ${worst.toFixed(2)} dB`);
    expect(left).toBeLessThanOrEqual(-30);
    expect(worst).toBeLessThanOrEqual(0.5);
  }, 120_000);

  it('finds a −40 dB pre-echo 1.37 s before a piano entry that follows 2.5 s of digital silence (±2 ms, ±3 dB)', async () => {
    // Source: a copy at −40 dB, low-passed at 5 kHz, 1.37 s early (real_clips.py); the analyses
    // issue's miss and its bar.
    const { source } = await load('piano-entry-pre');
    const r = await analyseEcho(source);
    expect(r.printThrough.present).toBe(true);
    expect(Math.abs(r.printThrough.delaySeconds! - -1.37)).toBeLessThanOrEqual(0.002);
    expect(Math.abs(r.printThrough.levelDb! - -40)).toBeLessThanOrEqual(3);
    expect(r.reflection.present).not.toBe(true);
  }, 60_000);
});
