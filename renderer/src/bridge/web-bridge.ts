/**
 * The bridge in web mode: the browser's file picker for opening, downloads for saving. Same
 * interface as the Electron preload, so the editor cannot tell them apart except by `mode`.
 */
import type { Bridge, ExportTarget, OpenedFile } from '../../../main/bridge/contract.ts';
import { AUDIO_EXTENSIONS, fileNameProblem, notOpenable, openableKind } from '../../../dsp/formats/file-names.ts';
import { ParameterError } from '../../../dsp/errors.ts';

/** The bridge's rule for a file name to save (main/bridge/validate.ts applies the same one). */
function fileName(call: string, v: unknown, extensions: readonly string[]): string {
  const why = fileNameProblem(v, extensions);
  if (why !== undefined) throw new ParameterError(`${call}: ${why}`);
  return v as string;
}

let counter = 0;
const newId = (prefix: 'f' | 'x') => `${prefix}-${(++counter).toString(36)}${Math.random().toString(36).slice(2, 8)}`;

function pick(accept: string): Promise<File | null> {
  return new Promise((resolve) => {
    const input = document.createElement('input');
    input.type = 'file';
    input.accept = accept;
    input.hidden = true;
    input.dataset.picker = accept;
    document.body.append(input);
    const done = (f: File | null) => { input.remove(); resolve(f); };
    input.addEventListener('change', () => done(input.files?.[0] ?? null), { once: true });
    input.addEventListener('cancel', () => done(null), { once: true });
    input.click();
  });
}

function download(blob: Blob, name: string): void {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.hidden = true;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 60_000);
}

interface ExportInProgress {
  target: ExportTarget;
  header: Uint8Array<ArrayBuffer> | null;
  parts: Blob[];
  bytes: number;
}

/** The web bridge, plus one web-only extra: the picked file itself, for the workers to read directly. */
export type WebBridge = Bridge & { blobOf(handle: string): Blob | undefined };

export function createWebBridge(): WebBridge {
  const files = new Map<string, { file: File; isDemo: boolean }>();
  const exports = new Map<string, ExportInProgress>();
  const opened = (file: File, isDemo: boolean): OpenedFile => {
    const handle = newId('f');
    files.set(handle, { file, isDemo });
    return { handle, name: file.name, path: null, sizeBytes: file.size, isDemo };
  };
  const fileOf = (h: string) => {
    const f = files.get(h);
    if (!f) throw new Error(`no open file ${h}`);
    return f.file;
  };
  return {
    mode: 'web',
    blobOf: (handle) => files.get(handle)?.file,
    async openDemo() {
      const list = await fetch('demo/').then((r) => (r.ok ? (r.json() as Promise<string[]>) : []), () => []);
      const name = list.find((n) => n.toLowerCase().endsWith('.wav'));
      if (!name) return null;
      const blob = await fetch(`demo/${encodeURIComponent(name)}`).then((r) => {
        if (!r.ok) throw new Error(`the demo recording could not be loaded (${r.status})`);
        return r.blob();
      });
      return opened(new File([blob], name, { type: 'audio/wav' }), true);
    },
    async pickAudioFile() {
      const f = await pick(AUDIO_EXTENSIONS.join(','));
      return f ? opened(f, false) : null;
    },
    async reopenSource() {
      const f = await pick(AUDIO_EXTENSIONS.join(','));
      return f ? opened(f, false) : null;
    },
    async readBytes(handle, offset, length) {
      const f = fileOf(handle);
      return f.slice(offset, Math.min(f.size, offset + length)).arrayBuffer();
    },
    async closeFile(handle) {
      files.delete(handle);
    },
    async beginExport(suggestedName, sourceHandle) {
      const name = fileName('beginExport', suggestedName, ['.wav']);
      if (fileOf(sourceHandle).name === name) {
        throw new Error(`"${name}" is the source recording's name; choose another — the original is never overwritten`);
      }
      const target: ExportTarget = { handle: newId('x'), name, path: null };
      exports.set(target.handle, { target, header: null, parts: [], bytes: 0 });
      return target;
    },
    async writeExport(handle, bytes, atOffset) {
      const x = exports.get(handle);
      if (!x) throw new Error(`no export ${handle}`);
      const u8 = new Uint8Array(bytes);
      if (atOffset === null) {
        if (x.header === null) x.header = u8;
        else x.parts.push(new Blob([u8]));
        x.bytes += u8.length;
        return;
      }
      // Only the header (the first write) can be patched in web mode.
      if (!x.header || atOffset + u8.length > x.header.length) throw new Error('web export can only patch its header');
      x.header.set(u8, atOffset);
    },
    async finishExport(handle) {
      const x = exports.get(handle);
      if (!x) throw new Error(`no export ${handle}`);
      exports.delete(handle);
      download(new Blob([x.header ?? new Uint8Array(0), ...x.parts], { type: 'audio/wav' }), x.target.name);
      return { name: x.target.name, path: null, bytes: x.bytes };
    },
    async abortExport(handle) {
      exports.delete(handle);
    },
    async saveSession(text, suggestedName) {
      const name = fileName('saveSession', suggestedName, ['.rwsession', '.json']);
      download(new Blob([text], { type: 'application/json' }), name);
      return { name, path: null };
    },
    async launched() {
      return null;
    },
    /** A file dropped on the page: a recording opened like a picked one, a session's text read like a picked one. */
    async dropped(file) {
      const kind = openableKind(file.name);
      if (kind === 'audio') return { kind, file: opened(file, false) };
      if (kind === 'session') return { kind, session: { name: file.name, path: null, text: await file.text() } };
      return { kind: 'refused', name: file.name, reason: notOpenable(file.name) };
    },
    async openSession() {
      const f = await pick('.rwsession,.json,application/json');
      return f ? { name: f.name, path: null, text: await f.text() } : null;
    },
  };
}
