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
  plugins: [webSecurity(), svelte({ compilerOptions: { runes: true } }), demoFiles(path.resolve(here, '../assets/demo')), operationSpecs()],
  build: {
    outDir: 'dist', emptyOutDir: true, target: 'es2022', chunkSizeWarningLimit: 2000,
    rollupOptions: {
      // Svelte's custom-element support (and the legacy class API it pulls in) sits behind a top-level
      // `if (typeof HTMLElement …)`, which keeps it in the bundle although no component is a custom element.
      treeshake: { moduleSideEffects: (id) => !/[\\/]svelte[\\/]src[\\/]internal[\\/]client[\\/]dom[\\/]elements[\\/]custom-element\.js$/.test(id) },
    },
  },
  // One worker file: the operations' algorithms, loaded on first use elsewhere, are inlined here.
  worker: { format: 'es', rollupOptions: { output: { inlineDynamicImports: true } } },
  server: { fs: { allow: [path.resolve(here, '..')] } },
  logLevel: 'warn',
});
