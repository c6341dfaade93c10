/// <reference lib="dom" />
/**
 * The demo at 1280×720 and 1440×900 (issue 13, points 7, 8 and 10), in Chromium: the corrections
 * and Render are on screen with every finding listed, the transport bar is one line, toasts stay
 * off the time ruler; the keys move the play position and the selection and render, compare and
 * export; the analysis settings make the demo's 1 kHz line-up tone usable for wow and flutter,
 * whose trace is then drawn; the displays carry their scales. Screenshots to test-output/screenshots/.
 */
import path from 'node:path';
import fs from 'node:fs';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { launch, watchErrors } from './browser.ts';

const root = path.resolve(import.meta.dirname, '../..');
const shots = path.join(root, 'test-output/screenshots');
const demo = JSON.parse(fs.readFileSync(path.join(root, 'assets/demo/thornbury-reel7.json'), 'utf8')) as { toneHz: number };
let browser: Browser;

beforeAll(async () => { browser = await launch(); });
afterAll(async () => { await browser?.close(); });

const inView = async (page: Page, testid: string) => {
  const b = (await page.getByTestId(testid).boundingBox())!;
  const v = page.viewportSize()!;
  return b.y >= 0 && b.y + b.height <= v.height && b.x >= 0 && b.x + b.width <= v.width;
};
const overlaps = (a: { x: number; y: number; width: number; height: number }, b: typeof a) =>
  a.x < b.x + b.width && b.x < a.x + a.width && a.y < b.y + b.height && b.y < a.y + a.height;

describe('layout, keys and displays on the demo', () => {
  for (const [w, h] of [[1280, 720], [1440, 900]] as const) {
    it(`${w}×${h}`, async () => {
      const page = await browser.newPage({ viewport: { width: w, height: h } });
      const errors = watchErrors(page);
      await page.goto(inject('editorUrl'));
      await page.locator('[data-testid=finding]').first().waitFor({ timeout: 120_000 });
      await page.getByTestId('overview-time').waitFor({ timeout: 60_000 });

      // Every "Correct it": the chain and Render stay on screen, the transport is one line.
      const fixes = page.locator('[data-testid=finding] [data-testid=add-fix]');
      for (let i = 0, n = await fixes.count(); i < n; i++) await fixes.nth(i).click();
      expect(await inView(page, 'preview')).toBe(true);
      expect(await page.getByTestId('corrections').locator('[data-testid=step]').first().isVisible()).toBe(true);
      const steps = await page.locator('[data-testid=step]').first().boundingBox();
      expect(steps!.y + 40).toBeLessThan(h);
      const play = (await page.getByTestId('play').boundingBox())!;
      const transport = (await page.getByTestId('play').locator('..').boundingBox())!;
      expect(transport.height).toBeLessThan(play.height + 16);
      expect(await page.getByTestId('meter').isVisible()).toBe(true);
      const ruler = (await page.getByTestId('ruler').boundingBox())!;
      for (const n of await page.locator('.notes p').all()) expect(overlaps((await n.boundingBox())!, ruler)).toBe(false);
      await page.screenshot({ path: path.join(shots, `30-layout-${w}x${h}.png`) });

      // Keys: play position, selection, amplitude zoom, render, compare, export.
      await page.locator('body').click({ position: { x: 4, y: h - 4 } });
      await page.keyboard.press('Home');
      await page.keyboard.press('ArrowRight');
      await page.keyboard.press('ArrowRight');
      expect(await page.getByTestId('playhead').textContent()).toBe('0:02.000');
      await page.keyboard.press('Shift+ArrowRight');
      await page.keyboard.press('Shift+ArrowRight');
      await page.keyboard.press('Shift+ArrowUp');
      expect(await page.getByTestId('wave-zoom').textContent()).toBe('×2');
      await page.keyboard.press('r');
      await page.getByTestId('preview-state').waitFor({ timeout: 120_000 });
      await page.keyboard.press('c');
      await page.getByTestId('compare').waitFor();
      await expect.poll(() => page.getByTestId('compare-range').getAttribute('data-original'), { timeout: 60_000 }).toBe('2.0000:4.0000');
      expect(await inView(page, 'preview')).toBe(true);
      await page.getByTestId('spectrum-smoothing').selectOption({ label: 'none (every bin)' });
      await page.getByTestId('spectro-band').selectOption({ label: '20 Hz – 4 kHz' });
      await page.locator('[data-testid=remeasure]').first().waitFor({ timeout: 180_000 });
      await page.screenshot({ path: path.join(shots, `31-compare-${w}x${h}.png`) });
      await page.keyboard.press('e');
      await page.getByTestId('export-dialog').waitFor();
      await page.keyboard.press('Escape');
      await page.getByTestId('export-dialog').waitFor({ state: 'detached' });

      // Analysis settings: the demo's line-up tone for wow and flutter, then its trace.
      await page.getByTestId('analysis-settings-toggle').click();
      await page.locator('[data-testid=analysis-settings] [data-param=toneHz] input').fill(String(demo.toneHz));
      await page.getByTestId('reexamine-settings').click();
      await page.getByTestId('flutter-curve').waitFor({ timeout: 120_000 });
      expect(Number(await page.getByTestId('flutter-trace').getAttribute('data-points'))).toBeGreaterThan(100);
      // Source: the demo's own description of its tone (assets/demo/thornbury-reel7.json), played fast by its speed factor.
      expect(await page.locator('[data-testid=finding][data-op=flutter]').allTextContents()).toEqual(expect.arrayContaining([expect.stringMatching(/Wow and flutter/)]));
      await page.getByTestId('flutter-curve').locator('summary').click();
      await page.screenshot({ path: path.join(shots, `32-flutter-${w}x${h}.png`) });
      // The setting is kept for the next visit; set it back for the other tests.
      await page.locator('[data-testid=analysis-settings] [data-param=toneHz] input').fill('');
      expect(errors, errors.join('\n')).toEqual([]);
      await page.close();
    });
  }
});
