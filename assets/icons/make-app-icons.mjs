#!/usr/bin/env node
// Renders assets/icons/app.svg with Debian's Chromium (playwright-core) to the application icons
// electron-builder packs: app-NNN.png (16–1024 px; Linux takes the folder assets/icons/app/),
// app.ico (Windows: PNG entries, ICONDIR layout) and app.icns (macOS: ic07–ic10 PNG entries).
// Run after changing app.svg: `node assets/icons/make-app-icons.mjs`; the outputs are committed.
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';

const here = path.dirname(fileURLToPath(import.meta.url));
const svg = fs.readFileSync(path.join(here, 'app.svg'), 'utf8');
const sizes = [16, 24, 32, 48, 64, 128, 256, 512, 1024];
const exe = ['/usr/lib/chromium/chromium', '/usr/bin/chromium'].find((f) => fs.existsSync(f));
if (!exe) throw new Error('needs Debian Chromium: apt-get install chromium');
const browser = await chromium.launch({ executablePath: exe, args: ['--headless', '--no-sandbox', '--disable-gpu'] });
const png = {};
try {
  const page = await browser.newPage();
  for (const n of sizes) {
    await page.setViewportSize({ width: n, height: n });
    await page.setContent(`<html><body style="margin:0;background:transparent">${svg.replace('<svg ', `<svg width="${n}" height="${n}" `)}</body></html>`);
    png[n] = await page.screenshot({ omitBackground: true, clip: { x: 0, y: 0, width: n, height: n } });
  }
} finally {
  await browser.close();
}
const linuxDir = path.join(here, 'app');
fs.mkdirSync(linuxDir, { recursive: true });
for (const n of sizes) fs.writeFileSync(path.join(linuxDir, `${n}x${n}.png`), png[n]);

// ICO: ICONDIR (reserved 0, type 1, count), one 16-byte ICONDIRENTRY per image (width/height 0 = 256), PNG payloads.
const icoSizes = [16, 24, 32, 48, 64, 128, 256];
const header = Buffer.alloc(6 + 16 * icoSizes.length);
header.writeUInt16LE(0, 0); header.writeUInt16LE(1, 2); header.writeUInt16LE(icoSizes.length, 4);
let offset = header.length;
icoSizes.forEach((n, i) => {
  const e = 6 + 16 * i;
  header[e] = n >= 256 ? 0 : n; header[e + 1] = n >= 256 ? 0 : n;
  header.writeUInt16LE(1, e + 4); header.writeUInt16LE(32, e + 6);
  header.writeUInt32LE(png[n].length, e + 8); header.writeUInt32LE(offset, e + 12);
  offset += png[n].length;
});
fs.writeFileSync(path.join(here, 'app.ico'), Buffer.concat([header, ...icoSizes.map((n) => png[n])]));

// ICNS: 'icns' + total length, then (type, length incl. 8-byte header, PNG) for 128/256/512/1024 px.
const icns = [['ic07', 128], ['ic08', 256], ['ic09', 512], ['ic10', 1024]].map(([type, n]) => {
  const h = Buffer.alloc(8); h.write(type, 0, 'latin1'); h.writeUInt32BE(8 + png[n].length, 4);
  return Buffer.concat([h, png[n]]);
});
const body = Buffer.concat(icns);
const top = Buffer.alloc(8); top.write('icns', 0, 'latin1'); top.writeUInt32BE(8 + body.length, 4);
fs.writeFileSync(path.join(here, 'app.icns'), Buffer.concat([top, body]));
console.log(`wrote ${linuxDir}/ (${sizes.length} PNGs), app.ico, app.icns`);
