/**
 * The editor's icons are defined once: every file in assets/icons (but the application icon) is
 * a 24 × 24 outline drawn in the current colour, and they all share one `<svg>` element with the
 * same attributes. The page keeps only what each one draws (its inner markup, `?raw` of an icon
 * file); components/icon.svelte wraps it in the shared element. An icon whose `<svg>` differs is
 * a build error rather than an icon drawn differently.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Plugin } from 'vite';

/** The element every editor icon is drawn in (components/icon.svelte writes the same one). */
export const ICON_SVG_OPEN = '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 24 24" fill="none" stroke="currentColor" stroke-width="1.6" stroke-linecap="round" stroke-linejoin="round">';

/** The inner markup of one icon file, or an error naming the file. */
export function iconBody(file: string, text: string): string {
  const t = text.trim();
  if (!t.startsWith(ICON_SVG_OPEN) || !t.endsWith('</svg>')) {
    throw new Error(`${file}: an editor icon must start with ${ICON_SVG_OPEN} and end with </svg>`);
  }
  return t.slice(ICON_SVG_OPEN.length, -'</svg>'.length).trim();
}

export function icons(dir: string): Plugin {
  const root = path.resolve(dir) + path.sep;
  return {
    name: 'reelwright-icons',
    enforce: 'pre',
    load(id) {
      const [file, query] = id.split('?');
      if (query !== 'raw' || !file || !path.resolve(file).startsWith(root) || !file.endsWith('.svg')) return null;
      this.addWatchFile(file);
      return `export default ${JSON.stringify(iconBody(path.basename(file), fs.readFileSync(file, 'utf8')))};`;
    },
  };
}
