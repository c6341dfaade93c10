/**
 * The editor's state and actions: one recording at a time. Views read it; components call its
 * actions. Heavy work goes to two workers (views / work) through Engine.
 */
import { getContext, setContext } from 'svelte';
import type { Bridge, OpenedFile } from '../../../main/bridge/contract.ts';
import { findOperation, corrections } from '../../../dsp/ops/registry.ts';
import type { Finding, ParamValues } from '../../../dsp/ops/types.ts';
import { Engine, JobError, type Task } from '../lib/engine.ts';
import { BASE_BUCKET_FRAMES, pyramidFromParts, type PeakPyramid } from '../lib/peaks.ts';
import { parseSession, sessionText, type Session } from '../lib/session-file.ts';
import type { DiagnoseResult } from '../../../dsp/ops/diagnose.ts';
import type { ExportFormat, OpenResult, PreviewResult, Remeasure, SpectrumPair } from '../worker/protocol.ts';
import { Player } from './player.svelte.ts';
import { StepsState } from './steps.svelte.ts';
import { Timeline } from './timeline.svelte.ts';

/** Largest preview held in memory (samples over all channels): ≈ 5.8 min of 48 kHz stereo. */
export const PREVIEW_MAX_SAMPLES = 1 << 25;

export interface TaskView { id: number; label: string; fraction: number; cancel: () => void }
export interface Note { id: number; text: string; tone: 'info' | 'warn' | 'error' }

export class Editor {
  readonly timeline = new Timeline();
  readonly steps = new StepsState();
  readonly player: Player;
  file = $state.raw<OpenedFile | null>(null);
  opened = $state.raw<OpenResult | null>(null);
  peaks = $state.raw<PeakPyramid | null>(null);
  corrected = $state.raw<{ peaks: PeakPyramid; offsetSeconds: number; preview: PreviewResult; version: number } | null>(null);
  diagnosis = $state.raw<DiagnoseResult | null>(null);
  spectra = $state.raw<SpectrumPair | null>(null);
  remeasures = $state.raw<Remeasure[] | null>(null);
  checksum = $state<string | null>(null);
  tasks = $state.raw<TaskView[]>([]);
  notes = $state.raw<Note[]>([]);
  matchLoudness = $state(true);
  exportOpen = $state(false);
  compareOpen = $state(false);
  /** Timing of the last overview (ms), shown in the status line and read by the browser test. */
  overviewMs = $state<number | null>(null);
  view = $state.raw<Engine | null>(null);
  work = $state.raw<Engine | null>(null);
  #taskId = 0;
  #noteId = 0;

  constructor(readonly bridge: Bridge) {
    const self = this;
    this.player = new Player({
      get view() { return self.view; },
      timeline: this.timeline,
      get sampleRateHz() { return self.opened?.layout.sampleRateHz ?? 48000; },
      get correctedMatchDb() { return self.correctedMatchDb; },
      get hasCorrected() { return self.corrected !== null; },
    });
  }

  get sampleRateHz(): number { return this.opened?.layout.sampleRateHz ?? 48000; }
  get channelCount(): number { return this.opened?.layout.channels ?? 1; }
  get correctionOps() { return corrections(); }
  /** The corrected preview no longer matches the steps. */
  get stale(): boolean { return this.corrected !== null && this.corrected.version !== this.steps.version; }
  get correctedMatchDb(): number {
    const p = this.corrected?.preview;
    if (!p || !this.matchLoudness) return 0;
    return Math.max(-24, Math.min(24, p.originalRmsDbfs - p.processedRmsDbfs));
  }

  note(text: string, tone: Note['tone'] = 'info'): void {
    const n = { id: ++this.#noteId, text, tone };
    this.notes = [...this.notes.slice(-4), n];
    setTimeout(() => (this.notes = this.notes.filter((x) => x.id !== n.id)), tone === 'error' ? 12000 : 6000);
  }

  #track<T>(label: string, start: (progress: (f: number, l: string) => void) => Task<T>): Promise<T> {
    const id = ++this.#taskId;
    let task: Task<T> | null = null;
    const cancel = () => task?.cancel();
    this.tasks = [...this.tasks, { id, label, fraction: 0, cancel }];
    task = start((fraction, l) => {
      this.tasks = this.tasks.map((t) => (t.id === id ? { ...t, fraction, label: l && l !== 'done' ? `${label}: ${l}` : label } : t));
    });
    return task.promise.finally(() => (this.tasks = this.tasks.filter((t) => t.id !== id)));
  }

  #fail = (what: string) => (err: unknown) => {
    if (err instanceof JobError && err.cancelled) { this.note(`${what}: cancelled`); return; }
    this.note(`${what}: ${err instanceof Error ? err.message : String(err)}`, 'error');
  };

  /** At start: the recording or session the app was started with, else (unless told not to) the demo. */
  openAtStart = async (demo: boolean) => {
    try {
      const l = await this.bridge.launched();
      if (l?.kind === 'audio') return await this.open(l.file);
      if (l?.kind === 'session') return await this.resumeSession(parseSession(l.session.text));
    } catch (e) { this.#fail('Opening the file the app was started with')(e); return; }
    if (demo) await this.openDemo();
  };

  openDemo = async () => {
    try {
      const f = await this.bridge.openDemo();
      if (!f) { this.note('No demo recording is installed (run: npm run demo). Open a file instead.', 'warn'); return; }
      await this.open(f);
    } catch (e) { this.#fail('Opening the demo')(e); }
  };

  pickFile = async () => {
    try {
      const f = await this.bridge.pickAudioFile();
      if (f) await this.open(f);
    } catch (e) { this.#fail('Opening')(e); }
  };

  async open(f: OpenedFile): Promise<void> {
    this.player.stop();
    this.view?.terminate();
    this.work?.terminate();
    if (this.file) void this.bridge.closeFile(this.file.handle);
    this.view = new Engine(this.bridge, 'views');
    this.work = new Engine(this.bridge, 'work');
    this.file = f;
    this.opened = null; this.peaks = null; this.corrected = null; this.diagnosis = null;
    this.spectra = null; this.remeasures = null; this.checksum = null; this.overviewMs = null;
    this.steps.reset([]);
    const blob = 'blobOf' in this.bridge ? (this.bridge as { blobOf(h: string): Blob | undefined }).blobOf(f.handle) : undefined;
    const ref = { handle: f.handle, name: f.name, sizeBytes: f.sizeBytes, ...(blob ? { blob } : {}) };
    const [opened] = await Promise.all([this.view.run({ type: 'open', file: ref }).promise, this.work.run({ type: 'open', file: ref }).promise]);
    this.opened = opened;
    this.timeline.reset(opened.layout.frames / opened.layout.sampleRateHz);
    const t0 = performance.now();
    const view = this.view, work = this.work;
    // The overview first (it has both cores to itself), then the diagnosis and the checksum.
    // Both workers build half of the overview each (two cores), joined here.
    const { frames, sampleRateHz } = opened.layout;
    const half = Math.ceil(frames / 2 / BASE_BUCKET_FRAMES) * BASE_BUCKET_FRAMES;
    const parts = frames > 8 * 1024 * 1024
      ? [{ e: view, s: 0, t: half }, { e: work, s: half, t: frames }]
      : [{ e: view, s: 0, t: frames }];
    const overview = this.#track('Overview', (p) => {
      const fr = parts.map(() => 0);
      const tasks = parts.map((x, i) => x.e.run({ type: 'overview', startFrame: x.s, endFrame: x.t }, { progress: (f) => { fr[i] = f; p(fr.reduce((a, b) => a + b, 0) / parts.length, ''); } }));
      return { promise: Promise.all(tasks.map((t) => t.promise)), cancel: () => tasks.forEach((t) => t.cancel()) };
    }).then((levels) => {
      if (this.view !== view) return;
      this.peaks = pyramidFromParts(levels, frames, sampleRateHz);
      this.overviewMs = performance.now() - t0;
    }, this.#fail('Overview'));
    void overview
      .then(() => (this.work === work ? this.#track('Diagnosis', (p) => work.run({ type: 'diagnose' }, { progress: p })) : null))
      .then((d) => { if (d && this.work === work) this.diagnosis = d; }, this.#fail('Diagnosis'))
      .then(() => this.work === work ? this.#track('Checksum', (p) => work.run({ type: 'checksum' }, { progress: p })) : null)
      .then((sum) => { if (sum && this.work === work) this.checksum = sum; }, this.#fail('Checksum'));
  }

  get findings(): Finding[] {
    return this.diagnosis?.findings ?? [];
  }

  /** The correction a finding suggests, when the registry has it. */
  suggestionOf(f: Finding): { op: string; title: string; params: ParamValues } | null {
    if (!f.suggestion) return null;
    const op = findOperation(f.suggestion.op);
    return op && op.kind === 'correction' ? { op: op.name, title: op.title, params: f.suggestion.params } : null;
  }

  addFromFinding = (f: Finding) => {
    const s = this.suggestionOf(f);
    if (!s) return;
    this.steps.add(s.op, s.params, { op: f.op, title: f.title }, s.title);
    this.note(`Added “${s.title}” with the measured settings.`);
  };

  addCorrection = (name: string) => {
    const op = findOperation(name);
    if (!op || op.kind !== 'correction') return;
    const params: ParamValues = {};
    for (const p of op.params) if (!p.cliOnly && p.default !== undefined) params[p.name] = p.default as ParamValues[string];
    this.steps.add(op.name, params, undefined, op.title);
  };

  /** The part of the recording a preview covers: all of it when it fits, else the selection or the view. */
  previewRegion(): { startFrame: number; endFrame: number } {
    const rate = this.sampleRateHz, frames = this.opened?.layout.frames ?? 0;
    const maxFrames = Math.floor(PREVIEW_MAX_SAMPLES / this.channelCount);
    if (frames <= maxFrames) return { startFrame: 0, endFrame: frames };
    const r = this.timeline.selection ?? { start: this.timeline.start, end: this.timeline.end };
    const start = Math.round(r.start * rate);
    return { startFrame: start, endFrame: Math.min(frames, start + Math.min(maxFrames, Math.round((r.end - r.start) * rate))) };
  }

  #previewTask: Task<PreviewResult> | null = null;
  preview = async () => {
    const view = this.view, work = this.work;
    if (!view || !work || !this.opened) return;
    this.#previewTask?.cancel();
    const version = this.steps.version;
    const steps = this.steps.enabled.map((s) => ({ op: s.op, params: s.params }));
    const region = this.previewRegion();
    try {
      const result = await this.#track('Preview', (p) => (this.#previewTask = work.run({ type: 'preview', steps, ...region }, { progress: p, warn: (m) => this.note(m, 'warn') })));
      if (this.work !== work) return;
      // The samples go on to the view worker (playback, drawing); the page keeps none of them.
      const channels = result.channels;
      const peaks = await view.run({ type: 'adoptProcessed', channels, sampleRateHz: result.sampleRateHz, startFrame: result.startFrame }, { transfer: channels.map((c) => c.buffer) }).promise;
      this.corrected = { peaks, offsetSeconds: result.startFrame / this.sampleRateHz, preview: { ...result, channels: [] }, version };
      for (const w of result.warnings) this.note(w, 'warn');
      void this.compare();
    } catch (e) { this.#fail('Preview')(e); }
  };

  compare = async () => {
    const work = this.work;
    if (!work || !this.opened) return;
    const rate = this.sampleRateHz;
    const r = this.corrected ? { start: this.corrected.preview.startFrame / rate, end: this.corrected.preview.endFrame / rate } : this.timeline.region;
    const sel = this.timeline.selection;
    const within = sel && sel.start >= r.start && sel.end <= r.end ? sel : r;
    const steps = this.steps.enabled.map((s) => ({ op: s.op, params: s.params }));
    try {
      this.spectra = await this.#track('Spectra', (p) => work.run({ type: 'spectra', startFrame: Math.round(within.start * rate), endFrame: Math.round(within.end * rate) }, { progress: p }));
      if (this.corrected) this.remeasures = await this.#track('Re-measuring', (p) => work.run({ type: 'remeasure', steps }, { progress: p }));
    } catch (e) { this.#fail('Compare')(e); }
  };

  exportTo = async (name: string, format: ExportFormat): Promise<boolean> => {
    const work = this.work, f = this.file;
    if (!work || !f) return false;
    let target;
    try {
      target = await this.bridge.beginExport(name, f.handle);
    } catch (e) { this.#fail('Export')(e); return false; }
    if (!target) return false;
    const steps = this.steps.enabled.map((s) => ({ op: s.op, params: s.params }));
    try {
      const r = await this.#track('Export', (p) => work.run({ type: 'export', steps, format, target: target.handle, description: `Restored from ${f.name}` }, { progress: p }));
      const done = await this.bridge.finishExport(target.handle);
      this.note(`Exported ${done.name} (${r.container}, ${(done.bytes / 1e6).toFixed(1)} MB, ${steps.length} step${steps.length === 1 ? '' : 's'} in its history).`);
      return true;
    } catch (e) {
      await this.bridge.abortExport(target.handle).catch(() => {});
      this.#fail('Export')(e);
      return false;
    }
  };

  saveSession = async () => {
    if (!this.file) return;
    if (!this.checksum) { this.note('The checksum is still being computed; try again in a moment.', 'warn'); return; }
    const text = sessionText({ name: this.file.name, path: this.file.path, sizeBytes: this.file.sizeBytes, audioMd5: this.checksum }, this.steps.steps);
    try {
      const saved = await this.bridge.saveSession(text, this.file.name.replace(/\.[^.]+$/, '') + '.rwsession');
      if (saved) this.note(`Session saved as ${saved.name}.`);
    } catch (e) { this.#fail('Saving the session')(e); }
  };

  /** A session waiting for its recording (web mode asks the user to pick it: a picker needs a click). */
  pendingSession = $state.raw<Session | null>(null);

  openSession = async () => {
    try {
      const t = await this.bridge.openSession();
      if (!t) return;
      const s = parseSession(t.text);
      if (this.bridge.mode === 'web') this.pendingSession = s;
      else await this.resumeSession(s);
    } catch (e) { this.#fail('Opening the session')(e); }
  };

  resumeSession = async (s: Session) => {
    this.pendingSession = null;
    try {
      const f = await this.bridge.reopenSource(s.source.path, s.source.name);
      if (!f) return;
      await this.open(f);
      this.steps.reset(s.steps);
      const work = this.work;
      const check = setInterval(() => {
        if (this.work !== work) { clearInterval(check); return; }
        if (!this.checksum) return;
        clearInterval(check);
        if (this.checksum !== s.source.audioMd5) this.note(`${f.name} is not the recording this session was made on (checksum differs).`, 'error');
        else this.note(`Session reopened: ${s.steps.length} steps on ${f.name}; checksum matches.`);
      }, 250);
    } catch (e) { this.#fail('Opening the session')(e); }
  };
}

const KEY = Symbol('editor');
export const setupEditor = (bridge: Bridge) => setContext(KEY, new Editor(bridge));
export const useEditor = () => getContext<Editor>(KEY);
