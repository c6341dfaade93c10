/**
 * The preload: the one bridge, exposed to the page as `window.reelwright`. Runs sandboxed, so
 * it is bundled into one file (bin/start.mjs) whose only import at run time is Electron's.
 * Each call is a typed ipcRenderer.invoke on its own channel; the main process validates again.
 */
import { contextBridge, ipcRenderer } from 'electron';
import type { Bridge, BridgeCall } from '../bridge/contract.ts';
import { channelOf } from '../bridge/validate.ts';

const call = <K extends BridgeCall>(k: K) =>
  ((...args: unknown[]) => ipcRenderer.invoke(channelOf(k), ...args)) as unknown as Bridge[K];

const bridge: Bridge = {
  mode: 'electron',
  openDemo: call('openDemo'),
  pickAudioFile: call('pickAudioFile'),
  reopenSource: call('reopenSource'),
  readBytes: async (handle, offset, length) => {
    const u8 = (await ipcRenderer.invoke(channelOf('readBytes'), handle, offset, length)) as Uint8Array;
    return u8.buffer.slice(u8.byteOffset, u8.byteOffset + u8.byteLength) as ArrayBuffer;
  },
  closeFile: call('closeFile'),
  beginExport: call('beginExport'),
  writeExport: call('writeExport'),
  finishExport: call('finishExport'),
  abortExport: call('abortExport'),
  saveSession: call('saveSession'),
  openSession: call('openSession'),
  launched: call('launched'),
};

contextBridge.exposeInMainWorld('reelwright', bridge);
