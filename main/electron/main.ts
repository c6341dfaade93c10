/**
 * The Electron main process: one window on the editor page, served from the app's own scheme
 * (reelwright://editor/) with a strict Content-Security-Policy; sandboxed, context-isolated
 * renderer without Node; navigation, new windows, permissions and remote content refused; every
 * IPC call checked for its sender and its arguments (main/bridge/validate.ts) before it runs.
 * Bundled by bin/start.mjs; Electron runs it through main.cjs.
 */
import { app, BrowserWindow, dialog, ipcMain, net, protocol, session, type IpcMainInvokeEvent } from 'electron';
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import type { Bridge, BridgeCall, BridgeIpcArgs } from '../bridge/contract.ts';
import { SECURITY_HEADERS } from '../bridge/security.ts';
import { AUDIO_EXTENSIONS, bridgeCalls, channelOf, isTrustedSenderUrl, validateCall } from '../bridge/validate.ts';
import { FileTable } from './files.ts';
import { ParameterError } from '../../dsp/errors.ts';
import { launchKind, launchPath } from './launch.ts';

const root = path.resolve(__dirname, '../../..');
const pageDir = path.join(root, 'renderer/dist');
const demoDir = path.join(root, 'assets/demo');
const SCHEME = 'reelwright';
const HOST = 'editor';
const trusted = [{ protocol: `${SCHEME}:`, host: HOST }];

protocol.registerSchemesAsPrivileged([{ scheme: SCHEME, privileges: { standard: true, secure: true, supportFetchAPI: true } }]);

const files = new FileTable();
let win: BrowserWindow | null = null;
/** The file the app was started with (argument, or macOS open-file), handed to the page once. */
let launchFile: string | null = launchPath(process.argv, app.isPackaged);

// macOS opens associated files by event, before or after the app is ready. While running, the
// editor is reloaded on the new file only if the user agrees (unsaved corrections are lost).
app.on('open-file', (e, p) => {
  e.preventDefault();
  if (!launchKind(p)) return;
  if (!win) { launchFile = p; return; }
  void dialog.showMessageBox(win, { type: 'question', buttons: ['Open', 'Cancel'], defaultId: 0, cancelId: 1, message: `Open ${path.basename(p)}?`, detail: 'Corrections not saved in a session are lost.' })
    .then((r) => { if (r.response === 0 && win) { launchFile = p; win.webContents.reload(); } });
});

/** The bridge's main-process side (the preload forwards each call here). */
type Handlers = { [K in BridgeCall]: (...args: BridgeIpcArgs<K>) => ReturnType<Bridge[K]> | Promise<Uint8Array> };

const handlers: Handlers = {
  async openDemo() {
    const name = fs.existsSync(demoDir) ? fs.readdirSync(demoDir).filter((n) => /\.wav$/i.test(n)).sort()[0] : undefined;
    return name ? files.open(path.join(demoDir, name), true) : null;
  },
  async pickAudioFile() {
    const r = await dialog.showOpenDialog(win!, { title: 'Open a recording', properties: ['openFile'], filters: [{ name: 'Audio', extensions: AUDIO_EXTENSIONS.map((e) => e.slice(1)) }] });
    return r.canceled || !r.filePaths[0] ? null : files.open(r.filePaths[0]);
  },
  async reopenSource(p, name) {
    // A session file can name any path: open it only if it is an audio file and the user agrees.
    const problem = p && files.isSessionSource(p) ? await files.sessionSourceProblem(p) : 'not named by a session the user opened';
    if (p && problem === null) {
      const answer = await dialog.showMessageBox(win!, {
        type: 'question',
        title: 'Open the session\'s recording',
        message: `This session was made on ${path.basename(p)}. Open it?`,
        detail: p,
        buttons: ['Open', 'Choose another file…', 'Cancel'],
        defaultId: 0,
        cancelId: 2,
      });
      if (answer.response === 0) return files.open(p);
      if (answer.response === 2) return null;
    }
    const r = await dialog.showOpenDialog(win!, { title: `Find ${name}`, properties: ['openFile'], filters: [{ name: 'Audio', extensions: AUDIO_EXTENSIONS.map((e) => e.slice(1)) }] });
    return r.canceled || !r.filePaths[0] ? null : files.open(r.filePaths[0]);
  },
  readBytes: (handle, offset, length) => files.read(handle, offset, length),
  closeFile: (handle) => files.close(handle),
  async beginExport(suggestedName, sourceHandle) {
    const source = files.sourcePath(sourceHandle);
    const r = await dialog.showSaveDialog(win!, { title: 'Export the corrected recording', defaultPath: path.join(path.dirname(source), suggestedName), filters: [{ name: 'WAV / Broadcast WAV', extensions: ['wav'] }] });
    if (r.canceled || !r.filePath) return null;
    return files.beginExport(r.filePath);
  },
  writeExport: (handle, bytes, atOffset) => files.write(handle, new Uint8Array(bytes), atOffset),
  finishExport: (handle) => files.finish(handle),
  abortExport: (handle) => files.abort(handle),
  async saveSession(text, suggestedName) {
    const r = await dialog.showSaveDialog(win!, { title: 'Save the session', defaultPath: suggestedName, filters: [{ name: 'Reelwright session', extensions: ['rwsession'] }] });
    if (r.canceled || !r.filePath) return null;
    return files.writeSession(r.filePath, text);
  },
  async openSession() {
    const r = await dialog.showOpenDialog(win!, { title: 'Open a session', properties: ['openFile'], filters: [{ name: 'Reelwright session', extensions: ['rwsession', 'json'] }] });
    if (r.canceled || !r.filePaths[0]) return null;
    return files.readSession(r.filePaths[0]);
  },
  async launched() {
    const p = launchFile;
    launchFile = null;
    const kind = p ? launchKind(p) : null;
    if (!p || !kind) return null;
    return kind === 'audio' ? { kind, file: await files.open(p) } : { kind, session: await files.readSession(p) };
  },
  // A file dropped on the window, by the path the preload read from the File: checked like the recording a session names.
  dropped: (p) => files.openDropped(p),
};

function checkSender(e: IpcMainInvokeEvent): void {
  const frame = e.senderFrame;
  if (!win || e.sender !== win.webContents || !frame || frame !== e.sender.mainFrame || !isTrustedSenderUrl(frame.url, trusted)) {
    throw new ParameterError('refused: the request did not come from the editor page');
  }
}

for (const call of bridgeCalls) {
  ipcMain.handle(channelOf(call), async (e, ...raw: unknown[]) => {
    checkSender(e);
    const { args } = validateCall(call, raw);
    return (handlers[call] as (...a: unknown[]) => Promise<unknown>)(...args);
  });
}

app.on('web-contents-created', (_e, contents) => {
  contents.on('will-navigate', (ev) => ev.preventDefault());
  contents.on('will-redirect', (ev) => ev.preventDefault());
  contents.on('will-attach-webview', (ev) => ev.preventDefault());
  contents.setWindowOpenHandler(() => ({ action: 'deny' }));
});

app.whenReady().then(() => {
  const ses = session.defaultSession;
  ses.setPermissionRequestHandler((_wc, _perm, done) => done(false));
  ses.setPermissionCheckHandler(() => false);
  // Only the app's own pages: anything else (http, https, file) is cancelled.
  ses.webRequest.onBeforeRequest((details, done) => {
    const ok = details.url.startsWith(`${SCHEME}://${HOST}/`) || details.url.startsWith('devtools:') || details.url.startsWith('blob:') || details.url.startsWith('data:');
    done({ cancel: !ok });
  });
  protocol.handle(SCHEME, async (req) => {
    const u = new URL(req.url);
    let rel: string;
    try {
      rel = decodeURIComponent(u.pathname === '/' ? '/index.html' : u.pathname);
    } catch {
      return new Response('bad request', { status: 400 });
    }
    const file = path.resolve(pageDir, '.' + rel);
    if (u.host !== HOST || !file.startsWith(pageDir + path.sep) || !fs.existsSync(file)) return new Response('not found', { status: 404 });
    const res = await net.fetch(pathToFileURL(file).href);
    const headers = new Headers(res.headers);
    for (const [name, value] of Object.entries(SECURITY_HEADERS)) headers.set(name, value);
    return new Response(res.body, { status: res.status, headers });
  });
  win = new BrowserWindow({
    width: 1440,
    height: 900,
    backgroundColor: '#101315',
    title: 'Reelwright',
    webPreferences: {
      preload: path.join(__dirname, 'preload.cjs'),
      contextIsolation: true,
      nodeIntegration: false,
      sandbox: true,
      webSecurity: true,
      allowRunningInsecureContent: false,
      webviewTag: false,
      spellcheck: false,
    },
  });
  // The page refuses to unload while corrections are unsaved (beforeunload); Electron shows no
  // question of its own, so ask here: leaving goes ahead only when the user says so.
  win.webContents.on('will-prevent-unload', (event) => {
    const answer = dialog.showMessageBoxSync(win!, {
      type: 'question', buttons: ['Keep working', 'Discard and leave'], defaultId: 0, cancelId: 0,
      message: 'Corrections not saved in a session',
      detail: 'Leaving now discards the corrections and markers that have not been saved in a session.',
    });
    if (answer === 1) event.preventDefault();
  });
  void win.loadURL(`${SCHEME}://${HOST}/index.html`);
  win.on('closed', () => (win = null));
});

app.on('window-all-closed', () => app.quit());
