/**
 * The editor page carries only the operations' specs: the Vite build of the page (as `npm start`
 * and the browser tests build it) leaves out every operation's work (run, prepare, findings …,
 * and the algorithms only they import), which runs in the worker. Prints the sizes.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { build } from 'vite';
import { repoRoot } from '../helpers/cli.ts';

/** Minified page bundle before the page read only specs: 351,397 bytes (measured at 9ba4ef6 with this build). */
const PAGE_BUDGET_BYTES = 160_000;

describe('editor page bundle', () => {
  it('holds the specs, not the operations’ work, which is in the worker', async () => {
    const out = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-page-'));
    try {
      // As `npm start` builds it: a production build (vitest itself runs with NODE_ENV=test).
      const env = process.env.NODE_ENV;
      process.env.NODE_ENV = 'production';
      try {
        await build({ configFile: path.join(repoRoot, 'renderer/vite.config.ts'), mode: 'production', logLevel: 'error', build: { outDir: out, emptyOutDir: true } });
      } finally {
        process.env.NODE_ENV = env;
      }
      const js = fs.readdirSync(path.join(out, 'assets')).filter((f) => f.endsWith('.js'));
      const page = js.filter((f) => f.startsWith('index-'));
      const worker = js.filter((f) => f.startsWith('engine.worker-'));
      // One page script and one worker script: no chunk of algorithms for the page to load later.
      expect(page).toHaveLength(1);
      expect(worker).toHaveLength(1);
      expect(js).toHaveLength(2);
      const pageJs = fs.readFileSync(path.join(out, 'assets', page[0]!), 'utf8');
      const workerJs = fs.readFileSync(path.join(out, 'assets', worker[0]!), 'utf8');
      console.log(`page bundle ${pageJs.length} bytes, worker ${workerJs.length} bytes (minified)`);
      // Specs are there: titles and parameter help the editor shows.
      for (const spec of ['Wow and flutter', 'Remove echo', 'New duration ÷ old duration']) {
        expect(pageJs.includes(spec), `page holds "${spec}"`).toBe(true);
        expect(workerJs.includes(spec), `worker holds "${spec}"`).toBe(true);
      }
      // The work is not (a findings sentence, a correction's warning, the resampler's and the FFT's own messages).
      for (const work of ['integrated loudness (ITU-R BS.1770)', 'is too close to 1 for a stable inverse', 'at input frame', 'must be a power of two']) {
        expect(pageJs.includes(work), `page holds "${work}"`).toBe(false);
        expect(workerJs.includes(work), `worker holds "${work}"`).toBe(true);
      }
      expect(pageJs.length).toBeLessThanOrEqual(PAGE_BUDGET_BYTES);
    } finally {
      fs.rmSync(out, { recursive: true, force: true });
    }
  });
});
