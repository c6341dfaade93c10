#!/usr/bin/env node
// `npm start`: builds the editor page and the Electron shell, then starts Electron on the demo
// recording. Where Electron's runtime cannot be had (offline, as in CI), it says so in one line
// and serves the same editor on http://127.0.0.1:PORT (web mode, PORT from the environment or
// 5183), where the page opens the demo by itself. Ctrl+C stops it. `npm start -- --web` skips Electron.
import { spawn, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { preview } from 'vite';
import { buildPage, buildShell, rendererConfig, root } from './build-editor.mjs';

const electronDir = path.join(root, 'node_modules/electron');
const webOnly = process.argv.includes('--web');

/** The Electron executable if it is installed, trying its own download once (quietly) if not. */
function electronBinary() {
  const find = () => {
    const override = process.env.ELECTRON_OVERRIDE_DIST_PATH;
    const pathTxt = path.join(electronDir, 'path.txt');
    const rel = fs.existsSync(pathTxt) ? fs.readFileSync(pathTxt, 'utf8').trim() : '';
    const exe = override ? path.join(override, rel || 'electron') : rel ? path.join(electronDir, 'dist', rel) : '';
    return exe && fs.existsSync(exe) ? exe : null;
  };
  let exe = find();
  if (!exe && fs.existsSync(path.join(electronDir, 'install.js'))) {
    spawnSync(process.execPath, [path.join(electronDir, 'install.js')], { stdio: 'ignore', timeout: 120_000 });
    exe = find();
  }
  return exe;
}

/** Starts Electron; resolves false if it exits with an error within a few seconds (it could not start). */
function tryElectron(exe) {
  return new Promise((resolve) => {
    const child = spawn(exe, [root], { stdio: ['ignore', 'inherit', 'pipe'] });
    let early = true;
    let errText = '';
    child.stderr.on('data', (d) => { errText += d; if (!early) process.stderr.write(d); });
    const timer = setTimeout(() => { early = false; if (errText) process.stderr.write(errText); resolve(true); }, 4000);
    child.on('error', () => { clearTimeout(timer); resolve(false); });
    child.on('exit', (code) => {
      if (early) { clearTimeout(timer); resolve(code === 0 ? true : false); return; }
      process.exit(code ?? 0);
    });
  });
}

async function serveWeb(reason) {
  const port = Number(process.env.PORT) || 5183;
  const server = await preview({ configFile: rendererConfig, logLevel: 'error', preview: { host: '127.0.0.1', port, strictPort: false, open: false } });
  const url = server.resolvedUrls?.local[0] ?? `http://127.0.0.1:${port}/`;
  console.log(`${reason}; serving the same editor in web mode at ${url} (the demo opens there).`);
  if (process.env.DISPLAY || process.platform === 'darwin' || process.platform === 'win32') {
    const opener = process.platform === 'darwin' ? 'open' : process.platform === 'win32' ? 'explorer' : 'xdg-open';
    spawn(opener, [url], { stdio: 'ignore', detached: true }).on('error', () => {}).unref();
  }
  const stop = () => server.close().finally(() => process.exit(0));
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}

await buildPage();
await buildShell();
if (webOnly) {
  await serveWeb('Web mode requested');
} else {
  const exe = electronBinary();
  if (!exe) await serveWeb('The Electron runtime is not available on this machine (it could not be downloaded)');
  else if (!(await tryElectron(exe))) await serveWeb('Electron could not start here');
}
