/// <reference lib="dom" />
/**
 * The editor end to end, in web mode (the page `npm start` serves when Electron cannot start),
 * driven through Debian's Chromium: open a recording, see the findings, add the correction a
 * finding suggests, render the preview, see the before/after spectra change, export, and check
 * the exported file with the project's Node reader (main/io) against the same correction run in Node.
 * Screenshots of the main screens go to test-output/screenshots/.
 *
 * Which finding: REELWRIGHT_E2E_FINDING (default "echo"). While that analysis is not in the
 * registry, the first finding that suggests a correction is used.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { corrections, findOperation } from '../../dsp/ops/registry.ts';
import { parseHistoryLine } from '../../dsp/formats/index.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { findingsOf } from '../../dsp/ops/diagnose.ts';
import { silentContext, type AnalysisOp, type CorrectionOp, type Finding, type ParamValues } from '../../dsp/ops/types.ts';
import { MemorySource, collectBlocks, readAll } from '../../dsp/source.ts';
import { openAudio } from '../../main/io/index.ts';
import { launch, watchErrors } from './browser.ts';
import { voiceLike, wav24 } from './make-wav.ts';

const root = path.resolve(import.meta.dirname, '../..');
const shots = path.join(root, 'test-output/screenshots');
const work = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-e2e-'));
const preferred = process.env.REELWRIGHT_E2E_FINDING ?? 'echo';
const demoDir = path.join(root, 'assets/demo');
const demoName = fs.existsSync(demoDir) ? fs.readdirSync(demoDir).filter((n) => /\.wav$/i.test(n)).sort()[0] : undefined;

const md5 = (file: string) => createHash('md5').update(fs.readFileSync(file)).digest('hex');

/** A file read with the project's Node reader (main/io): its facts, samples and CodingHistory. */
async function readWav(file: string) {
  const a = await openAudio(file);
  try {
    return { info: a.info, bitsPerSample: a.bitsPerSample, channels: await readAll(a), codingHistory: a.codingHistory };
  } finally {
    await a.close();
  }
}

let browser: Browser;
let page: Page;
let errors: string[];
let inputPath: string;

beforeAll(async () => {
  if (demoName) inputPath = path.join(demoDir, demoName);
  else {
    inputPath = path.join(work, 'harbour-office-take3.wav');
    fs.writeFileSync(inputPath, wav24(voiceLike(8, 48000)));
  }
  browser = await launch();
  const ctx = await browser.newContext({ acceptDownloads: true, viewport: { width: 1440, height: 900 } });
  page = await ctx.newPage();
  errors = watchErrors(page);
});

afterAll(async () => {
  await browser?.close();
  fs.rmSync(work, { recursive: true, force: true });
});

describe('editor in web mode', () => {
  it('opens a recording, corrects a finding, compares before/after and exports', async () => {
    const url = inject('editorUrl');
    const sourceSum = md5(inputPath);
    if (demoName) {
      await page.goto(url);
    } else {
      await page.goto(`${url}?nodemo`);
      const chooser = page.waitForEvent('filechooser');
      await page.getByRole('button', { name: 'Open recording' }).click();
      await (await chooser).setFiles(inputPath);
    }
    await page.getByTestId('file-name').filter({ hasText: path.basename(inputPath) }).waitFor();
    await page.locator('[data-testid=finding], [data-testid=no-findings]').first().waitFor({ timeout: 60_000 });
    await page.getByTestId('overview-time').waitFor({ timeout: 30_000 });
    await page.screenshot({ path: path.join(shots, '01-opened-findings.png') });

    // Which correction: the preferred analysis's suggestion when that analysis exists, else the
    // first finding in the page that suggests one. Only a registry without corrections skips it.
    const input = await readWav(inputPath);
    const source = new MemorySource(input.channels, input.info.sampleRateHz);
    const facts = { sampleRateHz: source.sampleRateHz, channelCount: source.channelCount, frames: source.frames };
    const analysisNames = findOperation(preferred)?.kind === 'analysis'
      ? [preferred]
      : await page.locator('[data-testid=finding]:not([data-suggests=""])').evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.op!));
    let correction: CorrectionOp | null = null;
    let params: ParamValues = {};
    if (corrections().length > 0) {
      expect(analysisNames.length, 'a finding that suggests a correction').toBeGreaterThan(0);
      const analysis = findOperation(analysisNames[0]!) as AnalysisOp;
      const result = await analysis.run(source, validateParams(analysis.params, {}), silentContext);
      const finding = findingsOf(analysis, result, facts).find((f: Finding) => f.suggestion && findOperation(f.suggestion.op)?.kind === 'correction')!;
      expect(finding, `${analysis.name} suggests a correction`).toBeDefined();
      correction = findOperation(finding.suggestion!.op) as CorrectionOp;
      params = validateParams(correction.params, finding.suggestion!.params);

      const card = page.locator(`[data-testid=finding][data-op="${analysis.name}"][data-suggests="${correction.name}"]`).first();
      await expect(card.textContent()).resolves.toContain(finding.title);
      await card.getByTestId('add-fix').click();
      await page.locator(`[data-testid=step][data-op="${correction.name}"]`).waitFor();

      // Undo and redo the addition from the keyboard.
      await page.locator('body').press('Control+z');
      await page.locator('[data-testid=step]').waitFor({ state: 'detached' });
      await page.locator('body').press('Control+Shift+Z');
      await page.locator(`[data-testid=step][data-op="${correction.name}"]`).waitFor();
    } else {
      console.log('[e2e] the registry has no corrections yet: exporting the recording unchanged');
    }

    await page.getByTestId('preview').click();
    await page.getByTestId('preview-state').filter({ hasText: 'up to date' }).waitFor({ timeout: 60_000 });
    await page.screenshot({ path: path.join(shots, '02-corrections-preview.png') });

    await page.getByTestId('open-compare').click();
    const chart = page.locator('[data-testid=spectrum-chart][data-has-after=yes]');
    await chart.waitFor({ timeout: 60_000 });
    const change = page.getByTestId('spectra-change');
    await change.waitFor();
    const maxDb = Number(await change.getAttribute('data-max-db'));
    console.log(`[e2e] ${correction?.name ?? 'no correction'}: largest before/after spectrum change ${maxDb.toFixed(1)} dB at ${await change.getAttribute('data-at-hz')} Hz`);
    if (correction) expect(Math.abs(maxDb)).toBeGreaterThan(1);
    else expect(Math.abs(maxDb)).toBeLessThan(0.01);
    if (correction?.measures) await page.locator(`[data-testid=remeasure][data-analysis="${correction.measures}"]`).waitFor({ timeout: 60_000 });
    await page.waitForTimeout(600); // spectrogram tiles arrive
    await page.screenshot({ path: path.join(shots, '03-compare.png') });

    // Listening: the caution comes first, then playback moves the meter; B switches to corrected.
    await page.getByTestId('play').click();
    await page.getByTestId('caution').waitFor();
    await page.screenshot({ path: path.join(shots, '04-listening-caution.png') });
    await page.getByTestId('caution-ok').click();
    await page.waitForFunction(() => Number(document.querySelector('[data-testid=meter]')?.getAttribute('aria-valuenow')) > -60, null, { timeout: 10_000 });
    await page.locator('body').press('b');
    await expect(page.getByTestId('listen-corrected').getAttribute('aria-pressed')).resolves.toBe('true');
    await page.locator('body').press(' ');

    // Export: the source's own name is refused; another name downloads.
    await page.getByTestId('open-export').click();
    await page.getByTestId('export-name').fill(path.basename(inputPath));
    await expect(page.getByTestId('export-go').isDisabled()).resolves.toBe(true);
    await page.getByTestId('export-name').fill('e2e-restored.wav');
    await page.screenshot({ path: path.join(shots, '05-export.png') });
    const download = page.waitForEvent('download');
    const failure = page.getByTestId('note-error').first().waitFor({ timeout: 60_000 }).then(async () => page.getByTestId('note-error').first().textContent());
    await page.getByTestId('export-go').click();
    const outPath = path.join(work, 'e2e-restored.wav');
    const first = await Promise.race([download, failure]);
    if (typeof first === 'string' || first === null) throw new Error(`export failed: ${first}`);
    await first.saveAs(outPath);

    const out = await readWav(outPath);
    expect(out.info.sampleRateHz).toBe(input.info.sampleRateHz);
    expect(out.info.channels).toBe(input.info.channels);
    expect(out.bitsPerSample).toBe(24);
    expect(out.info.format).toBe('BWF');
    let expected: readonly Float64Array[] = input.channels;
    if (correction) {
      const rendering = await correction.prepare(source, params, silentContext);
      expected = await collectBlocks(rendering.blocks, rendering.channelCount);
      params = { ...params, ...rendering.resolved };
    }
    expect(out.channels[0]!.length).toBe(expected[0]!.length);
    let worst = 0;
    for (let c = 0; c < expected.length; c++) {
      for (let i = 0; i < expected[c]!.length; i++) worst = Math.max(worst, Math.abs(out.channels[c]![i]! - expected[c]![i]!));
    }
    // 24-bit rounding (½ LSB) when processed; the unprocessed 24-bit source comes back bit-exact (no dither at equal word length).
    expect(worst).toBeLessThanOrEqual(correction ? 0.5 / 2 ** 23 + 1e-12 : 0);
    const texts = out.codingHistory.split('\r\n').filter(Boolean).map((l) => parseHistoryLine(l)['T'] ?? '');
    if (correction) expect(texts).toContain(correction.history(params).replace(/[\r\n]+/g, ' ').replace(/,/g, ';').trim());
    expect(texts.at(-1)).toMatch(/^reelwright export/);
    // Metadata kept: the source's history comes first, its other chunks are carried over.
    expect(out.codingHistory.startsWith(input.codingHistory.trimEnd())).toBe(true);
    for (const id of input.info.chunks.filter((c) => !['fmt ', 'data', 'bext', 'JUNK', 'ds64', 'fact'].includes(c))) expect(out.info.chunks).toContain(id);

    // The session: saved with the source's audio checksum (the same MD5 as the Node reader's), reopened with its steps.
    const saved = page.waitForEvent('download');
    await page.getByRole('button', { name: 'Save session' }).click();
    const sessionPath = path.join(work, 'session.json');
    await (await saved).saveAs(sessionPath);
    const session = JSON.parse(fs.readFileSync(sessionPath, 'utf8'));
    const reader = await openAudio(inputPath);
    expect(session.source.audioMd5).toBe(await reader.audioMd5());
    await reader.close();
    expect(session.steps.map((x: { op: string }) => x.op)).toEqual(correction ? [correction.name] : []);
    await page.goto(`${url}?nodemo`);
    const pickSession = page.waitForEvent('filechooser');
    await page.getByRole('button', { name: 'Open session' }).click();
    await (await pickSession).setFiles(sessionPath);
    const pickSource = page.waitForEvent('filechooser');
    await page.getByTestId('find-source').click();
    await (await pickSource).setFiles(inputPath);
    await page.getByText('checksum matches').waitFor({ timeout: 60_000 });
    if (correction) await page.locator(`[data-testid=step][data-op="${correction.name}"]`).waitFor();

    expect(md5(inputPath), 'the source is untouched').toBe(sourceSum);
    expect(errors, errors.join('\n')).toEqual([]);
  });
});
