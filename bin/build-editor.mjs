// Builds the editor: the page (renderer/dist) and the Electron shell (main.ts and the sandboxed
// preload bundled into single CommonJS files whose only run-time imports are Electron and node:*).
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { build } from 'vite';

export const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
export const rendererConfig = path.join(root, 'renderer/vite.config.ts');

/** Builds the page into renderer/dist, or into `outDir` (the desktop package's staging folder). */
export async function buildPage(outDir) {
  await build({ configFile: rendererConfig, logLevel: 'error', ...(outDir ? { build: { outDir, emptyOutDir: true } } : {}) });
}

export async function buildShell(outDir = path.join(root, 'main/electron/build')) {
  for (const [entry, out, empty] of [['main.ts', 'main.cjs', true], ['preload.ts', 'preload.cjs', false]]) {
    await build({
      configFile: false,
      logLevel: 'error',
      build: {
        outDir,
        emptyOutDir: empty,
        ssr: path.join(root, 'main/electron', entry),
        target: 'node20',
        minify: false,
        rollupOptions: { external: ['electron', /^node:/], output: { format: 'cjs', entryFileNames: out } },
      },
    });
  }
  return outDir;
}
