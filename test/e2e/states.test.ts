/// <reference lib="dom" />
/**
 * The editor's states as a user drives them (issue 13, points 5, 6 and 9), in Chromium, web mode:
 * - files: the empty state says what to do; FLAC and AIFF open as in the command line (a FLAC made
 *   by the reference encoder shows STREAMINFO's checksum and exports the very samples of the WAV it
 *   was made from), a file dropped on the window opens, recent recordings and sessions are listed;
 * - errors and state: a file that cannot be opened is shown in words in place of the recording
 *   while the previous one stays open; opening another file ends every job of the old one; Cancel
 *   stops the examination; unsaved corrections are only discarded when the user says so, also on
 *   reload; a session reopened on another recording asks before applying anything; dialogs take
 *   the focus and close with Escape; an export's Cancel stops it and no file is saved;
 * - forms: fields in the editor's words and units, checked as typed with the message beside the
 *   field, a step that cannot render marked before rendering, Varispeed set one way at a time.
 * Screenshots go to test-output/screenshots/ (1280×720, the smaller of the two layouts).
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { openAudio } from '../../main/io/index.ts';
import { readAll } from '../../dsp/source.ts';
import { parseAudioLayoutFromBytes } from '../../dsp/formats/index.ts';
import { FLAC_TOOL, ensureTool } from '../setup/system-tools.ts';
import { launch, watchErrors } from './browser.ts';
import { voiceLike, wav24, writeLongWav } from './make-wav.ts';

const root = path.resolve(import.meta.dirname, '../..');
const shots = path.join(root, 'test-output/screenshots');
const work = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-states-'));
const file = (n: string) => path.join(work, n);

let browser: Browser;
let ctx: BrowserContext;
let page: Page;
let errors: string[];

beforeAll(async () => {
  // A 6 s stereo voice with a reflection, as a 24-bit WAV written by the test's own writer; the
  // reference encoder (Debian's flac) makes the FLAC from it and the AIFF from the FLAC.
  fs.writeFileSync(file('take2.wav'), wav24(voiceLike(6, 48000)));
  fs.writeFileSync(file('other-take.wav'), wav24(voiceLike(5, 48000, 99)));
  const flac = ensureTool(FLAC_TOOL);
  execFileSync(flac, ['-s', '-f', '-5', '-o', file('take2.flac'), file('take2.wav')]);
  execFileSync(flac, ['-s', '-f', '-d', '--force-aiff-format', '-o', file('take2.aiff'), file('take2.flac')]);
  // Not audio at all, and a WAV whose header promises a format it does not have.
  fs.writeFileSync(file('notes.wav'), 'Reel 7, side A: interview with the harbour master, 1968.\n');
  const bad = Buffer.from(fs.readFileSync(file('take2.wav')));
  bad.writeUInt32LE(1, 24); // a sample rate of 1 Hz
  fs.writeFileSync(file('one-hertz.wav'), bad);
  // Long enough that its examination and export take a while (Cancel must stop them).
  writeLongWav(file('long-transfer.wav'), 150, 96000);
  browser = await launch();
  ctx = await browser.newContext({ acceptDownloads: true, viewport: { width: 1280, height: 720 } });
  page = await ctx.newPage();
  errors = watchErrors(page);
});

afterAll(async () => {
  await browser?.close();
  fs.rmSync(work, { recursive: true, force: true });
});

async function pick(p: Page, name: string, button = page.getByRole('button', { name: 'Open recording' })): Promise<void> {
  const chooser = p.waitForEvent('filechooser');
  await button.click();
  await (await chooser).setFiles(file(name));
}

async function openedAndExamined(name: string): Promise<void> {
  await page.getByTestId('file-name').filter({ hasText: name }).waitFor({ timeout: 60_000 });
  await page.getByTestId('overview-time').waitFor({ timeout: 60_000 });
  await page.locator('[data-testid=finding], [data-testid=no-findings]').first().waitFor({ timeout: 120_000 });
}

const fullMd5 = () => page.getByTestId('checksum').getAttribute('data-md5', { timeout: 60_000 });

/** Drops a file on the window as a person dragging it from the desktop would. */
async function dropFile(name: string): Promise<void> {
  const b64 = fs.readFileSync(file(name)).toString('base64');
  const dt = await page.evaluateHandle(({ b64, name }) => {
    const bytes = Uint8Array.from(atob(b64), (c) => c.charCodeAt(0));
    const d = new DataTransfer();
    d.items.add(new File([bytes], name));
    return d;
  }, { b64, name });
  await page.dispatchEvent('main', 'dragover', { dataTransfer: dt });
  await page.getByTestId('drop-target').waitFor();
  await page.dispatchEvent('main', 'drop', { dataTransfer: dt });
}

/** MD5 of a PCM WAV's data chunk: what FLAC's STREAMINFO MD5 covers (RFC 9639 §8.2). */
function pcmMd5(p: string): string {
  const b = new Uint8Array(fs.readFileSync(p));
  const l = parseAudioLayoutFromBytes(b, p);
  return createHash('md5').update(b.subarray(l.dataOffset, l.dataOffset + l.dataBytes)).digest('hex');
}

describe('files', () => {
  it('says what to do when empty; opens FLAC and AIFF as the command line does; opens a dropped file; lists recent ones', async () => {
    await page.goto(`${inject('editorUrl')}?nodemo`);
    const empty = page.getByTestId('empty-state');
    await expect.poll(() => empty.textContent()).toMatch(/Open a recording.*drop a file/s);
    await page.screenshot({ path: path.join(shots, '20-empty-state.png') });

    await pick(page, 'take2.flac');
    await openedAndExamined('take2.flac');
    expect(await page.locator('header .file').textContent()).toMatch(/FLAC · 48 kHz · 24-bit/);
    // Source: the reference encoder's STREAMINFO MD5 is the MD5 of the WAV's PCM it was given.
    expect(await fullMd5()).toBe(pcmMd5(file('take2.wav')));
    await page.screenshot({ path: path.join(shots, '21-flac-open.png') });

    // Export without corrections: the WAV that comes out holds the very samples of the WAV the FLAC was made from.
    await page.getByTestId('open-export').click();
    await page.getByTestId('export-name').fill('take2-from-flac.wav');
    const download = page.waitForEvent('download');
    await page.getByTestId('export-go').click();
    const out = file('take2-from-flac.wav');
    await (await download).saveAs(out);
    const [a, b] = [await openAudio(out), await openAudio(file('take2.wav'))];
    try {
      const [x, y] = [await readAll(a), await readAll(b)];
      expect(a.bitsPerSample).toBe(24);
      for (let c = 0; c < 2; c++) expect(Buffer.from(x[c]!.buffer).equals(Buffer.from(y[c]!.buffer)), `channel ${c + 1}`).toBe(true);
    } finally { await a.close(); await b.close(); }

    await dropFile('take2.aiff');
    await openedAndExamined('take2.aiff');
    expect(await page.locator('header .file').textContent()).toMatch(/AIFF · 48 kHz · 24-bit/);
    const aiffFindings = await page.locator('[data-testid=finding]').count();
    expect(aiffFindings).toBeGreaterThan(0);

    // A dropped file that is neither a recording nor a session is refused by name; the recording stays open.
    fs.writeFileSync(file('notes.txt'), 'Reel 7, side A: interview with the harbour master, 1968.\n');
    await dropFile('notes.txt');
    await page.getByTestId('open-error').waitFor();
    expect(await page.getByTestId('open-error').locator('h2').textContent()).toBe('notes.txt cannot be opened');
    expect(await page.getByTestId('open-error-text').textContent()).toMatch(/^It is neither a recording \(\.wav, .*\.flac\) nor a session \(\.rwsession, \.json\)$/);
    await page.getByTestId('back-to-recording').click();
    await page.getByTestId('waveform').waitFor();
    expect(await page.getByTestId('file-name').textContent()).toBe('take2.aiff');

    await page.goto(`${inject('editorUrl')}?nodemo`);
    const recent = page.getByTestId('recent-item');
    await expect.poll(async () => (await recent.allTextContents()).map((t) => t.trim())).toEqual(['take2.aiff', 'take2.flac']);
    await page.screenshot({ path: path.join(shots, '22-recent.png') });
  });
});

describe('errors and state', () => {
  it('shows an unreadable file in words, keeps the previous recording, and ends the old jobs', async () => {
    await page.goto(`${inject('editorUrl')}?nodemo`);
    await pick(page, 'take2.wav', page.getByTestId('empty-open'));
    await openedAndExamined('take2.wav');

    await pick(page, 'notes.wav');
    const err = page.getByTestId('open-error');
    await err.waitFor();
    expect(await page.getByTestId('open-error-text').textContent()).toMatch(/not a WAV, RF64, AIFF or FLAC file/);
    expect(await page.getByTestId('file-name').textContent()).toBe('take2.wav');
    await expect.poll(() => page.getByTestId('open-export').isEnabled()).toBe(true);
    expect(await page.getByTestId('examining').count()).toBe(0);
    await page.screenshot({ path: path.join(shots, '23-open-error.png') });
    await pick(page, 'one-hertz.wav');
    await expect.poll(() => page.getByTestId('open-error-text').textContent()).toMatch(/sample rate of 1 Hz/);
    await page.getByTestId('back-to-recording').click();
    await page.getByTestId('waveform').waitFor();

    // A long file: Cancel stops its examination, and the panel says so (no "Examining…" left).
    await pick(page, 'long-transfer.wav');
    await page.getByTestId('file-name').filter({ hasText: 'long-transfer.wav' }).waitFor();
    const examining = page.locator('[data-testid=task]', { hasText: 'Examining' });
    await examining.waitFor({ timeout: 60_000 });
    await examining.getByRole('button', { name: 'Cancel' }).click();
    await page.getByTestId('examine-cancelled').waitFor({ timeout: 30_000 });
    await expect.poll(() => page.locator('[data-testid=task]', { hasText: 'Examining' }).count(), { timeout: 30_000 }).toBe(0);

    // Examine again, and open another file while it runs: nothing of the old recording survives.
    await page.getByTestId('reexamine').click();
    await examining.waitFor();
    await pick(page, 'take2.wav');
    await openedAndExamined('take2.wav');
    await expect.poll(() => page.locator('[data-testid=task]').count(), { timeout: 60_000 }).toBe(0);
    expect(await page.getByTestId('examining').count()).toBe(0);
  });

  it('asks before discarding unsaved corrections (Open, Demo, reload); dialogs take the focus and close with Escape', async () => {
    await page.getByLabel('Add a correction').selectOption('unecho');
    await page.getByRole('button', { name: 'Add', exact: true }).click();
    await page.locator('[data-testid=step]').waitFor();

    await page.getByRole('button', { name: 'Open recording' }).click();
    const dialog = page.getByTestId('discard-dialog');
    await dialog.waitFor();
    expect(await dialog.textContent()).toMatch(/1 correction has not been saved/);
    // The focus is in the dialog, on the safe answer.
    expect(await page.evaluate(() => document.activeElement?.closest('[aria-modal=true]')?.getAttribute('data-testid'))).toBe('discard-dialog');
    expect(await page.evaluate(() => (document.activeElement as HTMLElement | null)?.dataset.testid)).toBe('ask-keep');
    await page.screenshot({ path: path.join(shots, '24-discard-dialog.png') });
    await page.keyboard.press('Escape');
    await dialog.waitFor({ state: 'detached' });
    expect(await page.locator('[data-testid=step]').count()).toBe(1);
    expect(await page.getByTestId('file-name').textContent()).toBe('take2.wav');

    await page.getByRole('button', { name: 'Demo' }).click();
    await dialog.waitFor();
    await page.getByTestId('ask-keep').click();
    expect(await page.locator('[data-testid=step]').count()).toBe(1);

    // Reload: the browser's own question; dismissed, the work stays.
    let asked = '';
    page.once('dialog', (d) => { asked = d.type(); void d.dismiss(); });
    await page.reload({ timeout: 5_000 }).catch(() => {});
    expect(asked).toBe('beforeunload');
    expect(await page.locator('[data-testid=step]').count()).toBe(1);

    // The key list: one key away, closes with Escape.
    await page.locator('body').click({ position: { x: 5, y: 700 } });
    await page.keyboard.press('?');
    await page.getByTestId('shortcuts').waitFor();
    expect(await page.getByTestId('shortcuts').textContent()).toMatch(/Render the preview/);
    await page.screenshot({ path: path.join(shots, '25-shortcuts.png') });
    await page.keyboard.press('Escape');
    await page.getByTestId('shortcuts').waitFor({ state: 'detached' });
  });

  it('asks before applying a session to a different recording', async () => {
    const download = page.waitForEvent('download');
    await page.getByRole('button', { name: 'Save session' }).click();
    const sessionPath = file('take2.rwsession');
    await (await download).saveAs(sessionPath);
    await page.goto(`${inject('editorUrl')}?nodemo`);
    const pickSession = page.waitForEvent('filechooser');
    await page.getByTestId('empty-state').getByRole('button', { name: 'Open a session' }).click();
    await (await pickSession).setFiles(sessionPath);
    await pick(page, 'other-take.wav', page.getByTestId('find-source'));
    const ask = page.getByTestId('mismatch-dialog');
    await ask.waitFor({ timeout: 60_000 });
    expect(await ask.textContent()).toMatch(/other-take\.wav is not the recording this session was made on/);
    // Nothing is applied while it asks.
    expect(await page.locator('[data-testid=step]').count()).toBe(0);
    await page.screenshot({ path: path.join(shots, '26-session-mismatch.png') });
    await page.getByTestId('ask-no').click();
    expect(await page.locator('[data-testid=step]').count()).toBe(0);

    // The right recording: applied once the checksum matches.
    const pickAgain = page.waitForEvent('filechooser');
    await page.getByRole('button', { name: 'Open session' }).click();
    await (await pickAgain).setFiles(sessionPath);
    await pick(page, 'take2.wav', page.getByTestId('find-source'));
    await page.getByText('checksum matches').waitFor({ timeout: 60_000 });
    // The chain's cards come with its on-demand part: wait for the first, then count them.
    const steps = page.locator('[data-testid=step][data-op=unecho]');
    await steps.first().waitFor({ timeout: 30_000 });
    expect(await steps.count()).toBe(1);
  });

  it('stops an export on Cancel and saves no file', async () => {
    await pick(page, 'long-transfer.wav');
    await page.getByTestId('file-name').filter({ hasText: 'long-transfer.wav' }).waitFor({ timeout: 60_000 });
    await page.getByTestId('overview-time').waitFor({ timeout: 60_000 });
    let downloads = 0;
    page.on('download', () => downloads++);
    await page.keyboard.press('e');
    const dlg = page.getByTestId('export-dialog');
    await dlg.waitFor();
    expect(await page.evaluate(() => (document.activeElement as HTMLElement | null)?.dataset.testid)).toBe('export-name');
    await page.getByTestId('export-name').fill('long-restored.wav');
    await page.getByTestId('export-go').click();
    await page.getByTestId('export-progress').waitFor();
    await page.getByTestId('export-cancel').click();
    await page.getByText('Export cancelled: nothing was written.').waitFor({ timeout: 60_000 });
    await page.waitForTimeout(1500);
    expect(downloads).toBe(0);
    expect(await page.locator('[data-testid=task]', { hasText: 'Export' }).count()).toBe(0);
    await page.keyboard.press('Escape');
    await dlg.waitFor({ state: 'detached' });
  });
});

describe('parameter forms', () => {
  it('checks fields as typed, in the editor’s words and units, and marks a step that cannot render', async () => {
    await pick(page, 'take2.wav');
    await openedAndExamined('take2.wav');
    await page.getByLabel('Add a correction').selectOption('unecho');
    await page.getByRole('button', { name: 'Add', exact: true }).click();
    const card = page.locator('[data-testid=step][data-op=unecho]');
    const field = (name: string) => card.locator(`[data-testid=param][data-param=${name}]`);
    expect(await field('delaySeconds').locator('.unit').textContent()).toBe('ms');
    expect(await card.textContent()).not.toMatch(/--[a-z]/);

    await field('delaySeconds').locator('input').fill('0');
    await expect.poll(() => field('delaySeconds').getByTestId('param-message').textContent()).toMatch(/delay of 0/);
    expect(await card.getAttribute('data-blocked')).toBe('yes');
    expect(await page.getByTestId('preview').isDisabled()).toBe(true);

    await field('delaySeconds').locator('input').fill('37.5');
    await field('gain').locator('input').fill('1.5');
    await expect.poll(() => field('gain').getByTestId('param-message').textContent()).toBe('Must be between −1 and 1.');
    await field('gain').locator('input').fill('abc');
    await expect.poll(() => field('gain').getByTestId('param-message').textContent()).toBe('Not a number.');
    await field('gain').locator('input').fill('0.45');
    await expect.poll(() => field('gain').getByTestId('param-extra').textContent()).toBe('−6.9 dB');
    await field('rangeSeconds').getByLabel('Delay range, from').fill('40');
    await field('rangeSeconds').getByLabel('Delay range, to').fill('20');
    await expect.poll(() => field('rangeSeconds').getByTestId('param-message').textContent()).toBe('The lower end must be below the upper end.');
    await page.screenshot({ path: path.join(shots, '27-form-errors.png') });
    await field('rangeSeconds').getByLabel('Delay range, to').fill('');
    await field('rangeSeconds').getByLabel('Delay range, from').fill('');
    await expect.poll(() => card.getAttribute('data-blocked')).toBe('no');
    expect(await page.getByTestId('preview').isEnabled()).toBe(true);

    // A gain without its delay: the pair is checked before anything renders.
    await field('delaySeconds').locator('input').fill('');
    await expect.poll(() => field('gain').getByTestId('param-message').textContent()).toMatch(/needs its delay/);
    await card.getByTestId('step-remove').click();

    // Varispeed: one way of setting the speed at a time.
    await page.getByLabel('Add a correction').selectOption('varispeed');
    await page.getByRole('button', { name: 'Add', exact: true }).click();
    const vs = page.locator('[data-testid=step][data-op=varispeed]');
    const shown = () => vs.locator('[data-testid=param]').evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.param));
    expect(await shown()).toEqual(['followCurve', 'quality', 'rateHz']);
    await vs.getByTestId('step-mode').selectOption('pitch');
    expect(await shown()).toEqual(['semitones', 'cents', 'quality', 'rateHz']);
    expect(await vs.getAttribute('data-blocked')).toBe('yes');
    await vs.locator('[data-param=semitones] input').fill('-1');
    await expect.poll(() => vs.getAttribute('data-blocked')).toBe('no');
    await vs.getByTestId('step-mode').selectOption('undo');
    expect(await shown()).toEqual(['undo', 'quality', 'rateHz']);
    await vs.locator('[data-param=undo] input').fill('1.0293');
    await page.screenshot({ path: path.join(shots, '28-varispeed-form.png') });
    expect(errors, errors.join('\n')).toEqual([]);
  });
});
