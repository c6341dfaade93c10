/** The bridge the editor talks to: Electron's preload when present, otherwise the web one. */
import type { Bridge } from '../../../main/bridge/contract.ts';
import { createWebBridge } from './web-bridge.ts';

export function getBridge(): Bridge {
  const fromPreload = (globalThis as { reelwright?: Bridge }).reelwright;
  return fromPreload ?? createWebBridge();
}
