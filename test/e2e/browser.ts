/** Launching Debian's Chromium through playwright-core, with the flags this machine needs (TOOLCHAIN.md). */
import { chromium, type Browser, type Page } from 'playwright-core';
import { CHROMIUM, ensureTool } from '../setup/system-tools.ts';

export async function launch(): Promise<Browser> {
  return chromium.launch({
    executablePath: ensureTool(CHROMIUM),
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
      '--disable-component-update', '--disable-sync', '--autoplay-policy=no-user-gesture-required'],
  });
}

/** Collects page errors and console errors (a CSP violation is a console error). */
export function watchErrors(page: Page): string[] {
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(`pageerror: ${e.stack ?? e.message}`));
  page.on('console', (m) => { if (m.type() === 'error') errors.push(`console: ${m.text()}`); });
  return errors;
}
