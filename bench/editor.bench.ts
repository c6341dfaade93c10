/// <reference lib="dom" />
/**
 * The editor in Chromium (web mode, the page `npm start` serves offline) on a 1-hour 96 kHz 16-bit
 * stereo WAV (1.29 GiB, written one second at a time into a temp folder and deleted afterwards):
 * - time until the first waveform (the whole-file overview) is shown, from picking the file and as
 *   the page measures it; target ≤ 5 s;
 * - frame intervals while zooming and scrolling with the wheel on every frame while a preview
 *   renders; target p95 < 50 ms.
 * Printed beside what this browser needs merely to read the file once and its idle frame rhythm,
 * with the load average: on a busy machine the numbers are what they are, and the line says
 * whether each target was met. Nothing is relaxed. `npm run bench -- editor`.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { build, preview } from 'vite';
import { corrections } from '../dsp/ops/registry.ts';
import { launch, watchErrors } from '../test/e2e/browser.ts';
import { writeLongWav } from '../test/e2e/make-wav.ts';
import { fmt, line } from './util.ts';

const root = path.resolve(import.meta.dirname, '..');
const configFile = path.join(root, 'renderer/vite.config.ts');

const pct = (xs: number[], p: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor(p * s.length))] ?? NaN;
};
const verdict = (ok: boolean) => (ok ? 'target met' : 'TARGET MISSED');

export default async function bench(): Promise<void> {
  const work = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-editor-bench-'));
  const longPath = path.join(work, 'one-hour-96k.wav');
  await build({ configFile, logLevel: 'error' });
  const server = await preview({ configFile, logLevel: 'error', preview: { host: '127.0.0.1', port: 0, strictPort: false, open: false } });
  const browser = await launch();
  try {
    const t = performance.now();
    const bytes = writeLongWav(longPath, 3600, 96000);
    line('editor', 'write the 1-hour 96 kHz 16-bit stereo WAV', `${fmt((performance.now() - t) / 1000)} s`, `${(bytes / 2 ** 30).toFixed(2)} GiB`);
    const page = await browser.newPage({ viewport: { width: 1440, height: 900 } });
    const errors = watchErrors(page);
    await page.goto(`${server.resolvedUrls!.local[0]}?nodemo`);

    // Context: the browser reading the file once, nothing else.
    await page.evaluate(() => { const i = document.createElement('input'); i.type = 'file'; i.id = 'calibrate'; i.hidden = true; document.body.append(i); });
    await page.setInputFiles('#calibrate', longPath);
    const bareReadMs = await page.evaluate(async () => {
      const f = (document.getElementById('calibrate') as HTMLInputElement).files![0]!;
      const t0 = performance.now();
      for (let o = 0; o < f.size; o += 16 << 20) await f.slice(o, o + (16 << 20)).arrayBuffer();
      document.getElementById('calibrate')!.remove();
      return performance.now() - t0;
    });
    line('editor', 'reading the file once in the browser (context)', `${fmt(bareReadMs / 1000)} s`, `load average ${os.loadavg()[0]!.toFixed(1)} on ${os.cpus().length} cores`);

    const chooser = page.waitForEvent('filechooser');
    await page.getByRole('button', { name: 'Open recording' }).click();
    const t0 = performance.now();
    await (await chooser).setFiles(longPath);
    await page.getByTestId('overview-time').waitFor({ timeout: 120_000 });
    const wallMs = performance.now() - t0;
    const overviewMs = await page.evaluate(() => Number(document.querySelector('[data-testid=overview-time]')!.textContent!.match(/([\d.]+) s/)![1]) * 1000);
    line('editor', 'first waveform, 1 h 96 kHz stereo, from picking', `${fmt(wallMs / 1000)} s`, `${verdict(wallMs <= 5000)} (≤ 5 s)`);
    line('editor', 'first waveform, as the page measures it', `${fmt(overviewMs / 1000)} s`, verdict(overviewMs <= 5000));

    const first = corrections()[0];
    if (first) {
      await page.getByLabel('Add a correction').selectOption(first.name);
      await page.getByRole('button', { name: 'Add', exact: true }).click();
    }
    const idle = await page.evaluate(async () => {
      const f: number[] = [];
      let last = performance.now();
      for (let i = 0; i < 40; i++) { await new Promise(requestAnimationFrame); const now = performance.now(); f.push(now - last); last = now; }
      return f.slice(1);
    });
    line('editor', 'idle frame interval p95 (context)', `${fmt(pct(idle, 0.95), 1)} ms`);
    await page.getByTestId('preview').click();
    await page.locator('[data-testid=task]', { hasText: 'Preview' }).waitFor();
    const m = await page.evaluate(async () => {
      const el = document.querySelector('[data-testid=waveform]') as HTMLCanvasElement;
      const r = el.getBoundingClientRect();
      const frames: number[] = [];
      let busy = 0, last = performance.now(), k = 0;
      const end = last + 2500;
      while (performance.now() < end) {
        await new Promise(requestAnimationFrame);
        const now = performance.now();
        frames.push(now - last);
        last = now;
        const x = r.left + ((k * 37) % 100) / 100 * r.width;
        el.dispatchEvent(new WheelEvent('wheel', { deltaY: k % 2 ? (k % 6 < 3 ? -120 : 120) : 80, shiftKey: k % 2 === 0, clientX: x, clientY: r.top + 20, bubbles: true, cancelable: true }));
        if ([...document.querySelectorAll('[data-testid=task]')].some((t) => t.textContent?.includes('Preview'))) busy++;
        k++;
      }
      return { frames: frames.slice(1), busy };
    });
    const p95 = pct(m.frames, 0.95);
    line('editor', `frame p50, zoom/scroll during a ${first?.name ?? ''} preview`, `${fmt(pct(m.frames, 0.5), 1)} ms`, `${m.frames.length} frames, ${m.busy} during the render`);
    line('editor', 'frame p95, same', `${fmt(p95, 1)} ms`, `${verdict(p95 < 50)} (< 50 ms); max ${fmt(Math.max(...m.frames), 1)} ms`);
    if (errors.length) line('editor', 'page errors', String(errors.length), errors[0]!.slice(0, 120));
    await page.close();
  } finally {
    await browser.close();
    await server.close();
    fs.rmSync(work, { recursive: true, force: true });
  }
}
