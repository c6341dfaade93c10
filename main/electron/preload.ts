/**
 * The preload: the one bridge, exposed to the page as `window.reelwright`. Runs sandboxed, so
 * it is bundled into one file (bin/start.mjs) whose only import at run time is Electron's.
 * Each call is a typed ipcRenderer.invoke on its own channel; the main process validates again.
 */
import { contextBridge, ipcRenderer, webUtils } from 'electron';
import type { Bridge, BridgeCall, Dropped } from '../bridge/contract.ts';
import { channelOf } from '../bridge/validate.ts';
import { notOpenable, openableKind } from '../../dsp/formats/file-names.ts';

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
  // The page hands over the File it was given; only its path crosses to the main process, which checks the file.
  dropped: async (file) => {
    const name = typeof file?.name === 'string' ? file.name : 'the dropped item';
    if (!openableKind(name)) return { kind: 'refused', name, reason: notOpenable(name) };
    const p = webUtils.getPathForFile(file);
    if (!p) return { kind: 'refused', name, reason: `${name} is not a file on this computer` };
    return (await ipcRenderer.invoke(channelOf('dropped'), p)) as Dropped;
  },
};

contextBridge.exposeInMainWorld('reelwright', bridge);
