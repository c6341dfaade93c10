/** Vite build of the editor page (used by `npm start`, the Electron shell and the browser tests). */
import { svelte } from '@sveltejs/vite-plugin-svelte';
import { fileURLToPath } from 'node:url';
import path from 'node:path';
import { defineConfig } from 'vite';
import { demoFiles } from './demo-files.ts';
import { webSecurity } from './web-security.ts';
import { operationSpecs } from './operation-specs.ts';
import { icons } from './icons.ts';

const here = path.dirname(fileURLToPath(import.meta.url));

/**
 * Scoped-style class names, one per component file: `r` and five characters of the hash of its
 * path (Svelte's own `svelte-` and a hash of the CSS are twice as long, on every styled element).
 * Two files with the same name stop the build.
 */
const cssNames = new Map<string, string>();
function cssHash({ hash, filename }: { hash: (s: string) => string; filename: string }): string {
  const file = path.relative(here, filename);
  const name = `r${hash(file).slice(0, 5)}`;
  const taken = cssNames.get(name);
  if (taken !== undefined && taken !== file) throw new Error(`${file} and ${taken} have the same style class ${name}: change cssHash in renderer/vite.config.ts`);
  cssNames.set(name, file);
  return name;
}

export default defineConfig({
  root: here,
  base: './',
  plugins: [webSecurity(), icons(path.resolve(here, '../assets/icons')), svelte({ compilerOptions: { runes: true, cssHash } }), demoFiles(path.resolve(here, '../assets/demo')), operationSpecs()],
  build: {
    outDir: 'dist', emptyOutDir: true, target: 'es2022', chunkSizeWarningLimit: 2000, modulePreload: false, cssCodeSplit: false,
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
