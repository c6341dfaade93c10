/**
 * Web mode's server (issue 17, item 9): a malformed percent-escape under /demo/ gets 400 with no
 * stack trace; every response carries the desktop shell's security headers; request bodies are
 * limited. Served by Vite's preview server with the editor's plugins, over a stand-in page.
 */
import fs from 'node:fs';
import http from 'node:http';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { preview, type PreviewServer } from 'vite';
import { demoFiles } from '../../renderer/demo-files.ts';
import { REQUEST_BODY_LIMIT, webSecurity } from '../../renderer/web-security.ts';
import { EDITOR_CSP } from '../../main/bridge/security.ts';
import { repoRoot } from '../helpers/cli.ts';

const page = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-web-'));
let server: PreviewServer;
let base: URL;

beforeAll(async () => {
  fs.writeFileSync(path.join(page, 'index.html'), '<!doctype html><title>stand-in</title>');
  server = await preview({
    configFile: false,
    root: page,
    logLevel: 'silent',
    plugins: [webSecurity(), demoFiles(path.join(repoRoot, 'assets/demo'))],
    build: { outDir: page },
    preview: { host: '127.0.0.1', port: 0, strictPort: false, open: false },
  });
  base = new URL(server.resolvedUrls!.local[0]!);
});
afterAll(async () => {
  await server?.close();
  fs.rmSync(page, { recursive: true, force: true });
});

/** A raw HTTP request (fetch would normalise the path's escapes). */
function request(method: string, pathname: string, body?: { bytes: number; chunked?: boolean }): Promise<{ status: number; headers: http.IncomingHttpHeaders; text: string }> {
  return new Promise((resolve, reject) => {
    const req = http.request({ host: base.hostname, port: base.port, method, path: pathname, headers: body && !body.chunked ? { 'Content-Length': String(body.bytes) } : {} }, (res) => {
      let text = '';
      res.on('data', (d: Buffer) => (text += d.toString()));
      res.on('end', () => resolve({ status: res.statusCode!, headers: res.headers, text }));
    });
    req.on('error', (e) => (/ECONNRESET|EPIPE/.test(String(e)) ? resolve({ status: 413, headers: {}, text: '' }) : reject(e)));
    if (body) {
      for (let sent = 0; sent < body.bytes; sent += 4096) req.write(Buffer.alloc(Math.min(4096, body.bytes - sent), 0x41));
    }
    req.end();
  });
}

describe('web mode server', () => {
  it('a malformed percent-escape under /demo/ is 400 with no stack trace or install path', async () => {
    for (const p of ['/demo/%E0%A4%A', '/demo/%', '/x/demo/%zz.wav']) {
      const r = await request('GET', p);
      expect(r.status, p).toBe(400);
      expect(r.text).toBe('bad request: malformed percent-escape in the path\n');
      expect(r.text).not.toContain(repoRoot);
    }
    expect((await request('GET', '/demo/')).status).toBe(200);
    expect((await request('GET', '/demo/../package.json')).text).not.toContain('"name": "reelwright"');
  });

  it('every response carries the security headers of the desktop shell', async () => {
    for (const p of ['/', '/index.html', '/demo/', '/demo/%']) {
      const r = await request('GET', p);
      // Source: W3C CSP Level 3 (frame-ancestors 'none' forbids framing); Fetch standard
      // (X-Content-Type-Options: nosniff); W3C Referrer Policy (no-referrer).
      expect(r.headers['content-security-policy'], p).toBe(EDITOR_CSP);
      expect(EDITOR_CSP).toContain("frame-ancestors 'none'");
      expect(r.headers['x-content-type-options']).toBe('nosniff');
      expect(r.headers['referrer-policy']).toBe('no-referrer');
    }
  });

  it(`request bodies over ${REQUEST_BODY_LIMIT} bytes are refused with 413, declared or chunked`, async () => {
    expect((await request('POST', '/', { bytes: 1 << 20 })).status).toBe(413);
    expect((await request('POST', '/demo/', { bytes: 1 << 20, chunked: true })).status).toBe(413);
    expect((await request('GET', '/demo/', { bytes: 100 })).status).toBe(200);
  });
});
