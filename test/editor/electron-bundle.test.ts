/**
 * The Electron shell as Electron would load it: main and the sandboxed preload bundle into single
 * files whose only run-time imports are Electron and Node built-ins (a sandboxed preload can
 * require nothing else), and the preload exposes exactly one object, `reelwright`.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
// @ts-expect-error plain JavaScript build helper without type declarations
import { buildShell } from '../../bin/build-editor.mjs';

describe('Electron shell bundle', () => {
  it('bundles main and preload with only electron and node: imports; the preload exposes one bridge', async () => {
    const out = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-shell-'));
    try {
      await (buildShell as (dir: string) => Promise<string>)(out);
      const requires = (file: string) => [...fs.readFileSync(path.join(out, file), 'utf8').matchAll(/require\("([^"]+)"\)/g)].map((m) => m[1]!);
      expect(new Set(requires('preload.cjs'))).toEqual(new Set(['electron']));
      expect(requires('main.cjs').every((r) => r === 'electron' || r.startsWith('node:'))).toBe(true);
      const preload = fs.readFileSync(path.join(out, 'preload.cjs'), 'utf8');
      expect(preload.match(/exposeInMainWorld\(/g)).toHaveLength(1);
      expect(preload).toContain('"reelwright"');
      const main = fs.readFileSync(path.join(out, 'main.cjs'), 'utf8');
      for (const must of ['contextIsolation: true', 'nodeIntegration: false', 'sandbox: true', 'setWindowOpenHandler', 'will-navigate', 'Content-Security-Policy']) {
        expect(main, must).toContain(must);
      }
    } finally {
      fs.rmSync(out, { recursive: true, force: true });
    }
  });
});
