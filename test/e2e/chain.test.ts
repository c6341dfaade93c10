/// <reference lib="dom" />
/**
 * The chain of corrections as a user drives it on the demo (issue 13, points 2–4), in Chromium:
 * "Correct it" on every finding top to bottom puts the echo and channel fixes before the speed
 * change; a step moved after it says its delay is carried; Compare's re-measure reads as verdicts;
 * the corrected (longer) version has its own time line, and A/B switching and Compare on a
 * selection stay on the same programme; a marker is exported as a BWF cue point where the speed
 * correction moves it (read back by npm wavefile). Screenshots go to test-output/screenshots/.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { WaveFile } from 'wavefile';
import { launch, watchErrors } from './browser.ts';

const root = path.resolve(import.meta.dirname, '../..');
const shots = path.join(root, 'test-output/screenshots');
const work = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-chain-'));
const demo = JSON.parse(fs.readFileSync(path.join(root, 'assets/demo/thornbury-reel7.json'), 'utf8')) as { speedFactor: number; durationSeconds: number };

let browser: Browser;
let page: Page;
let errors: string[];

/** Seconds from the editor's m:ss.mmm. */
const seconds = (text: string | null) => {
  const parts = (text ?? '').trim().replace('−', '-').split(':').map(Number);
  return parts.reduce((acc, v) => acc * 60 + v, 0);
};
const playhead = async () => seconds(await page.getByTestId('playhead').textContent());
const stepOps = () => page.locator('[data-testid=step]').evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.op));

async function clickWave(fraction: number): Promise<void> {
  const box = (await page.getByTestId('waveform').boundingBox())!;
  await page.mouse.click(box.x + box.width * fraction, box.y + box.height * 0.3);
}

beforeAll(async () => {
  browser = await launch();
  const ctx = await browser.newContext({ acceptDownloads: true, viewport: { width: 1440, height: 900 } });
  page = await ctx.newPage();
  errors = watchErrors(page);
});

afterAll(async () => {
  await browser?.close();
  fs.rmSync(work, { recursive: true, force: true });
});

describe('a chain of corrections on the demo', () => {
  it('places, carries, re-measures, keeps its own time line and exports markers', async () => {
    await page.goto(inject('editorUrl'));
    await page.locator('[data-testid=finding]').first().waitFor({ timeout: 90_000 });
    await page.getByTestId('overview-time').waitFor({ timeout: 30_000 });

    // Point 1 as a user sees it: "Correct it" top to bottom.
    const fixes = page.locator('[data-testid=finding] [data-testid=add-fix]');
    const n = await fixes.count();
    expect(n).toBe(3);
    for (let i = 0; i < n; i++) await page.locator('[data-testid=finding] [data-testid=add-fix]:not([disabled])').first().click();
    await expect.poll(stepOps).toEqual(['unecho', 'align', 'varispeed']);
    const echoCard = page.locator('[data-testid=step][data-op=unecho]');
    await expect(echoCard.getByTestId('step-timing').first().textContent()).resolves.toMatch(/Measured on the original recording; nothing before it changes time/);
    await page.getByTestId('corrections').scrollIntoViewIfNeeded();
    await page.screenshot({ path: path.join(shots, '10-chain-default.png') });

    // Moved after the varispeed, the card says the delay is carried and to what.
    await echoCard.getByTitle('Move down').click();
    await echoCard.getByTitle('Move down').click();
    await expect.poll(stepOps).toEqual(['align', 'varispeed', 'unecho']);
    const carried = await echoCard.getByTestId('step-timing').first().textContent();
    const m = /carried across Varispeed: delay (12\.0\d\d) ms → (12\.[34]\d\d) ms/.exec(carried ?? '');
    expect(m).not.toBeNull();
    // Source: the demo's truth (assets/demo/thornbury-reel7.json): played ×1.0293, so a delay measured
    // on the original lasts 1.0293 times as long after the speed is undone (to the 3 decimals shown).
    expect(Math.abs(Number(m![2]) / Number(m![1]) - 1.0293)).toBeLessThan(2e-4);
    await echoCard.scrollIntoViewIfNeeded();
    await page.screenshot({ path: path.join(shots, '11-chain-carried.png') });
    await page.locator('body').press('Control+z');
    await page.locator('body').press('Control+z');
    await expect.poll(stepOps).toEqual(['unecho', 'align', 'varispeed']);

    // Point 2: render, compare, and read the verdicts.
    await page.getByTestId('preview').click();
    await page.getByTestId('preview-state').filter({ hasText: 'up to date' }).waitFor({ timeout: 120_000 });
    await page.getByTestId('open-compare').click();
    await page.locator('[data-testid=remeasure]').nth(2).waitFor({ timeout: 180_000 });
    const verdicts = await page.getByTestId('verdict').allTextContents();
    const clean = verdicts.map((t) => t.replace(/\s+/g, ' ').trim());
    console.log(clean.map((t) => `[e2e verdict] ${t}`).join('\n'));
    expect(clean[0]).toMatch(/^Reflection at 12\.0\d ms, gain 0\.4\d → none found: fixed$/);
    expect(clean[1]).toMatch(/^Inter-channel delay 12\.0 µs → -?0\.\d µs: fixed$/);
    expect(clean[2]).toBe('Speed factor 1.0293 → 1.0000: fixed');
    const outcomes = await page.getByTestId('verdict').evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.outcome));
    expect(outcomes.filter((o) => o === 'fixed').length).toBe(3);
    await expect(page.locator('[data-testid=remeasure][data-op=unecho]').textContent()).resolves.toMatch(/steady tone at .* left out/);
    // The headline leaves out bands above the programme's bandwidth.
    const change = page.getByTestId('spectra-change');
    const at = Number(await change.getAttribute('data-at-hz')), limit = Number(await change.getAttribute('data-limit-hz'));
    expect(limit).toBeGreaterThan(5000);
    expect(at).toBeLessThanOrEqual(limit);
    await page.waitForTimeout(800); // spectrogram tiles arrive
    await page.screenshot({ path: path.join(shots, '12-compare-verdicts.png') });

    // Point 3: the corrected version on its own time line, A/B on the same programme.
    const ruler = page.getByTestId('ruler');
    await clickWave(0.5);
    const before = await playhead();
    expect(before).toBeGreaterThan(8);
    await page.locator('body').press('b');
    await expect.poll(() => ruler.getAttribute('data-base')).toBe('corrected');
    const corrDuration = Number(await ruler.getAttribute('data-duration'));
    expect(corrDuration).toBeCloseTo(demo.durationSeconds * demo.speedFactor, 1);
    const after = await playhead();
    // Source: the speed correction makes every instant × the measured factor (1.0293) later.
    expect(after / before).toBeCloseTo(demo.speedFactor, 3);
    await page.getByTitle('Whole recording (0)').click();
    await page.waitForTimeout(800);
    await page.screenshot({ path: path.join(shots, '13-corrected-time-line.png') });
    await page.locator('body').press('b');
    await expect.poll(() => ruler.getAttribute('data-base')).toBe('original');
    expect(Math.abs((await playhead()) - before)).toBeLessThan(0.002);

    // Compare on a selection compares the same programme on both time lines.
    const box = (await page.getByTestId('waveform').boundingBox())!;
    await page.mouse.move(box.x + box.width * 0.3, box.y + 30);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width * 0.45, box.y + 30, { steps: 5 });
    await page.mouse.up();
    await page.getByRole('button', { name: 'Measure again' }).click();
    const range = page.getByTestId('compare-range');
    await range.filter({ hasText: 'selection' }).waitFor({ timeout: 60_000 });
    const [o0, o1] = (await range.getAttribute('data-original'))!.split(':').map(Number) as [number, number];
    const [c0, c1] = (await range.getAttribute('data-corrected'))!.split(':').map(Number) as [number, number];
    expect(c0 / o0).toBeCloseTo(demo.speedFactor, 3);
    expect(c1 / o1).toBeCloseTo(demo.speedFactor, 3);
    await expect.poll(() => page.getByTestId('task').count(), { timeout: 60_000 }).toBe(0);
    await page.waitForTimeout(800);
    await page.screenshot({ path: path.join(shots, '14-compare-selection.png') });

    // Point 4: a step limited to the selection says so on its card (and undoes in one step).
    await echoCard.getByTestId('step-limit').click();
    await expect(echoCard.getByTestId('step-range').textContent()).resolves.toMatch(/^0:07\.\d{3}–0:10\.\d{3}$/);
    await expect(echoCard.locator('[data-testid=step-timing][data-kind=range]').textContent()).resolves.toMatch(/10 ms crossfades/);
    await page.locator('body').press('Control+z');
    await echoCard.getByTestId('step-range').waitFor({ state: 'detached' });

    // Point 4: a marker, named, exported as a cue point where the correction moves it.
    await clickWave(0.25);
    const markAt = await playhead();
    await page.getByTestId('add-marker').click();
    const name = page.getByTestId('marker-name').first();
    await name.fill('Ada begins');
    await name.press('Enter');
    await clickWave(0.9);
    await page.getByTestId('marker-jump').first().click();
    expect(Math.abs((await playhead()) - markAt)).toBeLessThan(0.002);
    await page.getByTestId('open-export').click();
    await page.getByTestId('export-name').fill('chain-restored.wav');
    const download = page.waitForEvent('download', { timeout: 120_000 });
    await page.getByTestId('export-go').click();
    const outPath = path.join(work, 'chain-restored.wav');
    await (await download).saveAs(outPath);
    const wf = new WaveFile(fs.readFileSync(outPath));
    const cues = wf.listCuePoints() as { dwSampleOffset: number; label: string }[];
    expect(cues.map((c) => c.label)).toEqual(['Ada begins']);
    expect(cues[0]!.dwSampleOffset / 48000 / markAt).toBeCloseTo(demo.speedFactor, 3);
    await page.screenshot({ path: path.join(shots, '15-markers.png') });

    expect(errors, errors.join('\n')).toEqual([]);
  });
});
