/** Vite build of the editor page (used by `npm start`, the Electron shell and the browser tests). */
import { svelte } from '@sveltejs/vite-plugin-svelte';
import { fileURLToPath } from 'node:url';
import path from 'node:path';
import { defineConfig } from 'vite';
import { demoFiles } from './demo-files.ts';
import { webSecurity } from './web-security.ts';
import { operationSpecs } from './operation-specs.ts';

const here = path.dirname(fileURLToPath(import.meta.url));

export default defineConfig({
  root: here,
  base: './',
  plugins: [webSecurity(), svelte(), demoFiles(path.resolve(here, '../assets/demo')), operationSpecs()],
  build: { outDir: 'dist', emptyOutDir: true, target: 'es2022', chunkSizeWarningLimit: 2000 },
  // One worker file: the operations' algorithms, loaded on first use elsewhere, are inlined here.
  worker: { format: 'es', rollupOptions: { output: { inlineDynamicImports: true } } },
  server: { fs: { allow: [path.resolve(here, '..')] } },
  logLevel: 'warn',
});
