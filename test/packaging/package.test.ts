/**
 * The desktop package. electron-builder itself loads and checks electron-builder.yml against its
 * schema; then `npm run dist -- --dir` (bin/dist.mjs) runs for real on Linux, as far as this
 * machine allows: the Electron runtime cannot be downloaded here, so electron-builder is given a
 * stand-in unpacked runtime (`-c.electronDist`, its documented option for a local Electron),
 * and everything else — staging, the file set from the config, app.asar — is electron-builder's
 * own work. The asar's file list is asserted: what the app runs and nothing else.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { createRequire } from 'node:module';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AUDIO_EXTENSIONS } from '../../main/bridge/validate.ts';

const root = path.resolve(import.meta.dirname, '../..');
const require = createRequire(import.meta.url);
const { getConfig, validateConfiguration } = require('app-builder-lib/out/util/config/config.js') as {
  getConfig(projectDir: string, configPath: string, fromOptions: null): Promise<Record<string, any>>;
  validateConfiguration(config: unknown, logger: unknown): Promise<void>;
};
const { DebugLogger } = require('builder-util') as { DebugLogger: new (enabled: boolean) => unknown };
const asar = require('@electron/asar') as { listPackage(file: string): string[]; extractFile(file: string, name: string): Buffer };

const work = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-dist-'));
afterAll(() => fs.rmSync(work, { recursive: true, force: true }));

let config: Record<string, any>;
beforeAll(async () => {
  config = await getConfig(root, path.join(root, 'electron-builder.yml'), null);
});

describe('electron-builder configuration', () => {
  it('passes electron-builder’s own schema check, which rejects a misspelt option', async () => {
    await expect(validateConfiguration(config, new DebugLogger(false))).resolves.toBeUndefined();
    await expect(validateConfiguration({ ...config, nsis: { ...config.nsis, oneClik: false } }, new DebugLogger(false))).rejects.toThrow(/configuration/);
  });

  it('names the app and targets AppImage + deb, NSIS and dmg with our icons', () => {
    expect(config.appId).toBe('app.reelwright.editor');
    expect(config.productName).toBe('Reelwright');
    expect(config.linux.target).toEqual(['AppImage', 'deb']);
    expect(config.win.target).toBe('nsis');
    expect(config.mac.target).toBe('dmg');
    // Source: ICO = ICONDIR (0, type 1, count) — Microsoft "Icons" (1995); ICNS magic 'icns' — Apple Icon Image format (common practice).
    const ico = fs.readFileSync(path.join(root, config.win.icon));
    expect([ico.readUInt16LE(0), ico.readUInt16LE(2)]).toEqual([0, 1]);
    expect(fs.readFileSync(path.join(root, config.mac.icon)).toString('latin1', 0, 4)).toBe('icns');
    for (const n of [16, 32, 48, 128, 256, 512]) {
      const png = fs.readFileSync(path.join(root, config.linux.icon, `${n}x${n}.png`));
      // Source: PNG signature and IHDR width/height (ISO/IEC 15948 §5.2, §11.2.2).
      expect(png.subarray(0, 8).toString('hex')).toBe('89504e470d0a1a0a');
      expect([png.readUInt32BE(16), png.readUInt32BE(20)]).toEqual([n, n]);
    }
  });

  it('associates every audio type the editor opens, and the session file', () => {
    const exts = (config.fileAssociations as Array<{ ext: string | string[] }>).flatMap((a) => [a.ext].flat());
    expect(new Set(exts)).toEqual(new Set([...AUDIO_EXTENSIONS.map((e) => e.slice(1)), 'rwsession']));
  });
});

describe('npm run dist -- --dir (Linux, stand-in Electron runtime)', () => {
  const out = path.join(work, 'out');
  const stage = path.join(work, 'stage');
  let entries: string[];

  beforeAll(() => {
    const runtime = path.join(work, 'electron-runtime');
    fs.mkdirSync(path.join(runtime, 'resources'), { recursive: true });
    fs.mkdirSync(path.join(runtime, 'locales'), { recursive: true });
    fs.writeFileSync(path.join(runtime, 'locales/en-US.pak'), '');
    fs.writeFileSync(path.join(runtime, 'electron'), '#!/bin/sh\necho "stand-in for the Electron runtime" >&2\nexit 1\n', { mode: 0o755 });
    const r = spawnSync(process.execPath, [path.join(root, 'bin/dist.mjs'), `--stage=${stage}`, '--dir', '--linux', '--x64', `-c.electronDist=${runtime}`, `-c.directories.output=${out}`], { cwd: root, encoding: 'utf8', timeout: 240_000 });
    expect(r.status, `${r.stdout}\n${r.stderr}`).toBe(0);
    entries = asar.listPackage(path.join(out, 'linux-unpacked/resources/app.asar')).map((e) => e.split(path.sep).join('/'));
  }, 300_000);

  it('packs the bundled main process and preload, the built page and the demo, and nothing else', () => {
    const files = entries.filter((e) => path.extname(e) !== '' || e.endsWith('/package.json'));
    const expected = [
      /^\/package\.json$/,
      /^\/main\/electron\/main\.cjs$/,
      /^\/main\/electron\/build\/main\.cjs$/,
      /^\/main\/electron\/build\/preload\.cjs$/,
      /^\/renderer\/dist\/index\.html$/,
      /^\/renderer\/dist\/assets\/index-[\w-]+\.js$/,
      // The one style sheet of the page and its on-demand parts.
      /^\/renderer\/dist\/assets\/style-[\w-]+\.css$/,
      /^\/renderer\/dist\/assets\/engine\.worker-[\w-]+\.js$/,
      // The page's chunks fetched when a dialog or panel is first opened (renderer/src/lib/lazy.svelte.ts).
      /^\/renderer\/dist\/assets\/[a-z][\w.-]*-[\w-]+\.(js|css)$/,
      /^\/assets\/demo\/thornbury-reel7\.wav$/,
    ];
    console.log(`[dist] app.asar: ${files.join(', ')}`);
    for (const f of files) expect(expected.some((re) => re.test(f)), `unexpected file in app.asar: ${f}`).toBe(true);
    for (const re of expected) expect(files.some((f) => re.test(f)), `missing from app.asar: ${re}`).toBe(true);
    for (const e of entries) expect(e).not.toMatch(/node_modules|\.ts$|\.map$|^\/(test|bench|dsp|bin)\b|\/src\//);
    expect(fs.existsSync(path.join(out, 'linux-unpacked/resources/app.asar.unpacked'))).toBe(false);
    expect(fs.existsSync(path.join(out, 'linux-unpacked/reelwright'))).toBe(true);
  });

  it('carries a package.json without dependencies or scripts, and a main process that needs only Electron and Node', () => {
    const pkg = JSON.parse(asar.extractFile(path.join(out, 'linux-unpacked/resources/app.asar'), 'package.json').toString('utf8'));
    expect(pkg).toMatchObject({ name: 'reelwright', productName: 'Reelwright', main: 'main/electron/main.cjs' });
    for (const k of ['dependencies', 'devDependencies', 'scripts']) expect(pkg).not.toHaveProperty(k);
    const main = asar.extractFile(path.join(out, 'linux-unpacked/resources/app.asar'), 'main/electron/build/main.cjs').toString('utf8');
    const requires = [...main.matchAll(/require\("([^"]+)"\)/g)].map((m) => m[1]!);
    expect(requires.every((r) => r === 'electron' || r.startsWith('node:'))).toBe(true);
  });
});
