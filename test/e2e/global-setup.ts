/**
 * Builds the editor page once and serves it with Vite's preview server on 127.0.0.1 (web mode,
 * the same page `npm start` serves when Electron cannot start). Tests get the URL by inject('editorUrl').
 */
import fs from 'node:fs';
import path from 'node:path';
import { build, preview, type PreviewServer } from 'vite';
import type { TestProject } from 'vitest/node';
import { CHROMIUM, ensureTool } from '../setup/system-tools.ts';

declare module 'vitest' {
  export interface ProvidedContext {
    editorUrl: string;
  }
}

const root = path.resolve(import.meta.dirname, '../..');
const configFile = path.join(root, 'renderer/vite.config.ts');
let server: PreviewServer | undefined;

export async function setup(project: TestProject): Promise<void> {
  const out = path.join(root, 'test-output');
  fs.mkdirSync(path.join(out, 'screenshots'), { recursive: true });
  // A fresh machine has no browser: install Debian's Chromium (root) or stop with one line.
  ensureTool(CHROMIUM);

  await build({ configFile, logLevel: 'warn' });
  server = await preview({ configFile, logLevel: 'warn', preview: { host: '127.0.0.1', port: 0, strictPort: false, open: false } });
  const url = server.resolvedUrls?.local[0];
  if (!url) throw new Error('the preview server did not report its address');
  project.provide('editorUrl', url);
}

export async function teardown(): Promise<void> {
  await server?.close();
}
