/**
 * The one bridge between the editor (renderer/) and the machine it runs on. Type-only: nothing
 * here exists at run time. In Electron the preload implements it over IPC (main/electron); in web
 * mode renderer/src/bridge/web-bridge.ts implements it with the browser's file picker and
 * downloads. The editor never sees ipcRenderer, fs or paths it did not get from here.
 *
 * Audio travels as raw bytes: the editor's worker parses and encodes them with the pure functions
 * of dsp/formats, so both implementations only move bytes and never decode audio.
 */

/** An audio file the user opened (or the bundled demo). */
export interface OpenedFile {
  /** Opaque id for readBytes/closeFile; `f-` followed by letters and digits. */
  readonly handle: string;
  /** File name without folders ("harbour-interview.wav"). */
  readonly name: string;
  /** Absolute path in Electron; null in web mode (the browser does not tell it). */
  readonly path: string | null;
  readonly sizeBytes: number;
  readonly isDemo: boolean;
}

/** Where an export goes, chosen by the user in a save dialog (Electron) or a download (web). */
export interface ExportTarget {
  /** Opaque id for writeExport/finishExport/abortExport; `x-` followed by letters and digits. */
  readonly handle: string;
  readonly name: string;
  readonly path: string | null;
}

export interface ExportDone {
  readonly name: string;
  readonly path: string | null;
  readonly bytes: number;
}

export interface SavedText {
  readonly name: string;
  readonly path: string | null;
}

export interface OpenedText {
  readonly name: string;
  readonly path: string | null;
  readonly text: string;
}

/** Every call the editor can make. All calls return promises; failures reject with one-line messages. */
export interface Bridge {
  /** Which implementation is serving the editor. */
  readonly mode: 'electron' | 'web';
  /** Opens the bundled demo recording, or null when none is installed (run `npm run demo`). */
  openDemo(): Promise<OpenedFile | null>;
  /** Shows a file picker for audio; null when the user cancels. */
  pickAudioFile(): Promise<OpenedFile | null>;
  /**
   * Reopens the source named in a session file. Electron only allows paths that appear in a
   * session the user opened through openSession; web mode shows the file picker instead.
   */
  reopenSource(path: string | null, name: string): Promise<OpenedFile | null>;
  /** Reads up to `length` bytes at `offset` (fewer at the end of the file). */
  readBytes(handle: string, offset: number, length: number): Promise<ArrayBuffer>;
  closeFile(handle: string): Promise<void>;
  /**
   * Asks where to export. The answer never names the source file: the dialog refuses it
   * (`sourceHandle` says which file that is).
   */
  beginExport(suggestedName: string, sourceHandle: string): Promise<ExportTarget | null>;
  /** Appends bytes (atOffset null) or overwrites bytes already written (a header patch). */
  writeExport(handle: string, bytes: ArrayBuffer, atOffset: number | null): Promise<void>;
  /** Closes the export; in Electron the finished file is moved into place only now. */
  finishExport(handle: string): Promise<ExportDone>;
  abortExport(handle: string): Promise<void>;
  /** Saves the session JSON where the user says; null when cancelled. */
  saveSession(text: string, suggestedName: string): Promise<SavedText | null>;
  /** Opens a session JSON the user picks; null when cancelled. */
  openSession(): Promise<OpenedText | null>;
  /**
   * The recording or session the app was started with (a double-click on an associated file),
   * opened; null when there is none (always in web mode). Each launch file is handed out once.
   */
  launched(): Promise<Launched | null>;
  /**
   * Opens a file dropped on the editor's window: a recording (an audio file Reelwright reads,
   * opened as pickAudioFile opens one) or a session (its text, as openSession gives it).
   * Anything else is refused with a one-line reason. In Electron the preload turns the File into
   * its path (`webUtils.getPathForFile`), and the main process checks that path as it checks the
   * recording a session names: an audio file by its extension and first bytes, a regular file
   * that can be read; a session must be a Reelwright session file. Web mode reads the File.
   */
  dropped(file: File): Promise<Dropped>;
}

export type Launched = { readonly kind: 'audio'; readonly file: OpenedFile } | { readonly kind: 'session'; readonly session: OpenedText };

/** A dropped file, opened, or the reason it was not (nothing was opened). */
export type Dropped = Launched | { readonly kind: 'refused'; readonly name: string; readonly reason: string };

/** The calls that cross IPC (everything but `mode`). */
export type BridgeCall = Exclude<keyof Bridge, 'mode'>;
export type BridgeArgs<K extends BridgeCall> = Parameters<Bridge[K]>;
/** What a call carries over IPC: its arguments, except that a dropped File travels as its path. */
export type BridgeIpcArgs<K extends BridgeCall> = K extends 'dropped' ? [path: string] : BridgeArgs<K>;

/** IPC channel for a call. */
export type BridgeChannel<K extends BridgeCall = BridgeCall> = `reelwright:${K}`;
