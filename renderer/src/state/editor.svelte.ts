/**
 * The editor's state and actions: one recording at a time. Views read it; components call its
 * actions. Heavy work goes to two workers (views / work) through Engine.
 */
import { getContext, setContext } from 'svelte';
import type { Bridge, OpenedFile } from '../../../main/bridge/contract.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import { correctionChoices } from '../lib/operation-lists.ts';
import type { Finding, ParamValues } from '../../../dsp/ops/types.ts';
import { Engine, JobError, type Task } from '../lib/engine.ts';
import { BASE_BUCKET_FRAMES, pyramidFromParts, type PeakPyramid } from '../lib/peaks.ts';
import { parseSession, sessionText, type Session } from '../lib/session-file.ts';
import type { DiagnoseResult } from '../../../dsp/ops/diagnose.ts';
import type { ExportFormat, OpenResult, PreviewResult, Remeasure, SpectrumPair, StepSpec } from '../worker/protocol.ts';
import type { CorrectionOp } from '../../../dsp/ops/types.ts';
import { placementIndex, type Step } from '../lib/steps.ts';
import { describeSteps } from '../lib/chain-notes.ts';
import { correctedEnd, piecesFor, toCorrected, toOriginal, type Piece, type Placement } from '../lib/timebase.ts';
import { MarkersState } from './markers.svelte.ts';
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
  readonly markers = new MarkersState();
  readonly player: Player;
  file = $state.raw<OpenedFile | null>(null);
  opened = $state.raw<OpenResult | null>(null);
  peaks = $state.raw<PeakPyramid | null>(null);
  corrected = $state.raw<{ peaks: PeakPyramid; offsetSeconds: number; preview: PreviewResult; version: number; placement: Placement } | null>(null);
  /** What Compare measured, on both time lines (seconds). */
  compared = $state.raw<{ what: 'selection' | 'previewed part'; original: { start: number; end: number }; corrected: { start: number; end: number } | null } | null>(null);
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
      beforeSwitch: (to) => self.#rebase(self.base, to === 'processed' && self.corrected ? 'corrected' : 'original'),
    });
  }

  /** The time line shown: the corrected preview's own while listening to it, else the original's. */
  get base(): 'original' | 'corrected' {
    return this.player.which === 'processed' && this.corrected ? 'corrected' : 'original';
  }

  /** Seconds on the time line shown → seconds of the original recording. */
  toOriginal = (t: number): number => (this.base === 'corrected' && this.corrected ? toOriginal(this.corrected.placement, t) : t);
  /** Seconds of the original recording → seconds on the time line shown. */
  fromOriginal = (t: number): number => (this.base === 'corrected' && this.corrected ? toCorrected(this.corrected.placement, t) : t);

  /** How a view on the time line shown draws one version: null when at its own times, else the pieces (lib/timebase.ts). */
  piecesOf(which: 'original' | 'processed'): Piece[] | null {
    const c = this.corrected;
    if (!c) return null;
    if (this.base === 'corrected') return which === 'original' ? piecesFor(c.placement, 'original') : null;
    return which === 'processed' ? piecesFor(c.placement, 'corrected') : null;
  }

  /** Moves the time line between the original's and the corrected preview's (same programme position). */
  #rebase(from: 'original' | 'corrected', to: 'original' | 'corrected', old = this.corrected, next = this.corrected): void {
    if (from === to && old === next) return;
    const origDuration = (this.opened?.layout.frames ?? 0) / this.sampleRateHz;
    const toOrig = (t: number) => (from === 'corrected' && old ? toOriginal(old.placement, t) : t);
    const fromOrig = (t: number) => (to === 'corrected' && next ? toCorrected(next.placement, t) : t);
    const duration = to === 'corrected' && next ? correctedEnd(next.placement) : origDuration;
    this.timeline.rebase(duration, (t) => fromOrig(toOrig(t)));
  }

  /** The enabled steps as the worker takes them. */
  specs(): StepSpec[] {
    return this.steps.enabled.map((s) => ({
      op: s.op, params: s.params, basis: s.basis, measureHere: s.measureHere, rangeSeconds: s.rangeSeconds ?? null, suggestedBy: s.because?.op,
    }));
  }

  get facts() {
    return { sampleRateHz: this.sampleRateHz, channelCount: this.channelCount, frames: this.opened?.layout.frames ?? 0 };
  }

  /** The last render's report for each step (by id), while the preview matches the steps. */
  get reportsById(): Map<string, NonNullable<PreviewResult['reports']>[number]> {
    const m = new Map<string, PreviewResult['reports'][number]>();
    const c = this.corrected;
    if (!c || this.stale) return m;
    this.steps.enabled.forEach((s, i) => { const r = c.preview.reports[i]; if (r) m.set(s.id, r); });
    return m;
  }

  /** What each step card says about time (lib/chain-notes.ts), by step id. */
  get stepNotes() {
    const find = (n: string) => { const o = findOperation(n); return o?.kind === 'correction' ? (o as CorrectionOp) : undefined; };
    return describeSteps(this.steps.steps, this.facts, find, this.reportsById);
  }

  /** A marker at the play position (kept in original time). */
  addMarker = () => {
    if (!this.file) return;
    const m = this.markers.add(this.toOriginal(this.timeline.playhead));
    this.note(`${m.name} added at the play position.`);
  };

  /** Play position and view to a marker. */
  jumpTo = (id: string) => {
    const m = this.markers.list.find((x) => x.id === id);
    if (!m) return;
    const t = this.fromOriginal(m.seconds);
    this.timeline.playhead = Math.max(0, Math.min(this.timeline.duration, t));
    if (t < this.timeline.start || t > this.timeline.end) this.timeline.centre(t);
    if (this.player.playing) { this.player.stop(); this.player.play(); }
  };

  /** To the next (1) or previous (−1) marker from the play position. */
  jumpNext = (direction: 1 | -1) => {
    const m = this.markers.neighbour(this.toOriginal(this.timeline.playhead), direction);
    if (m) this.jumpTo(m.id);
  };

  /** Limits a step to the selection (in original time), or to all of the recording. */
  limitStep = (id: string, toSelection: boolean) => {
    const sel = this.timeline.selection;
    if (toSelection && !sel) return;
    const r = toSelection && sel ? ([this.toOriginal(sel.start), this.toOriginal(sel.end)] as const) : null;
    this.steps.setHow(id, { rangeSeconds: r ? [Math.min(r[0], r[1]), Math.max(r[0], r[1])] : null }, toSelection ? 'limit step to selection' : 'step on all of it');
  };

  get sampleRateHz(): number { return this.opened?.layout.sampleRateHz ?? 48000; }
  get channelCount(): number { return this.opened?.layout.channels ?? 1; }
  get correctionOps() { return correctionChoices(); }
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
    this.spectra = null; this.remeasures = null; this.checksum = null; this.overviewMs = null; this.compared = null;
    this.steps.reset([]);
    this.markers.reset([]);
    const blob = 'blobOf' in this.bridge ? (this.bridge as { blobOf(h: string): Blob | undefined }).blobOf(f.handle) : undefined;
    const ref = { handle: f.handle, name: f.name, sizeBytes: f.sizeBytes, ...(blob ? { blob } : {}) };
    const [opened] = await Promise.all([this.view.run({ type: 'open', file: ref }).promise, this.work.run({ type: 'open', file: ref }).promise]);
    this.opened = opened;
    this.markers.reset(opened.markers);
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
    // Measured on the original: it goes before a step that changes time, so it runs where it was measured.
    const find = (n: string) => { const o = findOperation(n); return o?.kind === 'correction' ? (o as CorrectionOp) : undefined; };
    const all = this.steps.steps;
    const at = placementIndex(all, find(s.op)!, s.params, this.facts, find);
    this.steps.add(s.op, s.params, { op: f.op, title: f.title }, s.title, at);
    const next: Step | undefined = all[at];
    this.note(next
      ? `Added “${s.title}” before “${find(next.op)?.title ?? next.op}”: it was measured on the original recording, so it runs before the timing changes.`
      : `Added “${s.title}” with the measured settings.`);
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
    const v = this.timeline.selection ?? { start: this.timeline.start, end: this.timeline.end };
    const a = this.toOriginal(v.start), b = this.toOriginal(v.end);
    const r = { start: Math.max(0, Math.min(a, b)), end: Math.max(a, b) };
    const start = Math.round(r.start * rate);
    return { startFrame: start, endFrame: Math.min(frames, start + Math.min(maxFrames, Math.round((r.end - r.start) * rate))) };
  }

  #previewTask: Task<PreviewResult> | null = null;
  preview = async () => {
    const view = this.view, work = this.work;
    if (!view || !work || !this.opened) return;
    this.#previewTask?.cancel();
    const version = this.steps.version;
    const steps = this.specs();
    const region = this.previewRegion();
    try {
      const result = await this.#track('Preview', (p) => (this.#previewTask = work.run({ type: 'preview', steps, ...region }, { progress: p, warn: (m) => this.note(m, 'warn') })));
      if (this.work !== work) return;
      // The samples go on to the view worker (playback, drawing); the page keeps none of them.
      const channels = result.channels;
      const peaks = await view.run({ type: 'adoptProcessed', channels, sampleRateHz: result.sampleRateHz, startFrame: result.startFrame }, { transfer: channels.map((c) => c.buffer) }).promise;
      const offsetSeconds = result.startFrame / this.sampleRateHz;
      const old = this.corrected, from = this.base;
      const next = { peaks, offsetSeconds, preview: { ...result, channels: [] }, version, placement: { offsetSeconds, segments: result.segments } };
      this.corrected = next;
      // Listening to the corrected version: stay on the same programme on its new time line.
      this.#rebase(from, this.base, old, next);
      for (const w of result.warnings) this.note(w, 'warn');
      void this.compare();
    } catch (e) { this.#fail('Preview')(e); }
  };

  /**
   * Spectra before and after over the same material (the selection, else the previewed part),
   * each on its own time line, then every step measured again on its own input and output.
   */
  compare = async () => {
    const work = this.work;
    if (!work || !this.opened) return;
    const rate = this.sampleRateHz;
    const c = this.corrected;
    const r = c ? { start: c.preview.startFrame / rate, end: c.preview.endFrame / rate } : { start: 0, end: this.opened.layout.frames / rate };
    const sel = this.timeline.selection;
    const selOrig = sel ? [this.toOriginal(sel.start), this.toOriginal(sel.end)].sort((x, y) => x - y) as [number, number] : null;
    const inside = selOrig !== null && selOrig[0] >= r.start - 1e-6 && selOrig[1] <= r.end + 1e-6;
    const original = inside ? { start: selOrig[0], end: selOrig[1] } : r;
    const m = c ? [toCorrected(c.placement, original.start), toCorrected(c.placement, original.end)].sort((x, y) => x - y) : null;
    const corrected = m ? { start: m[0]!, end: m[1]! } : null;
    this.compared = { what: inside ? 'selection' : 'previewed part', original, corrected };
    const steps = this.specs();
    try {
      this.spectra = await this.#track('Spectra', (p) => work.run({
        type: 'spectra', startFrame: Math.round(original.start * rate), endFrame: Math.round(original.end * rate),
        ...(corrected ? { afterStartSeconds: corrected.start, afterEndSeconds: corrected.end } : {}),
      }, { progress: p }));
      // Each step is measured again over the whole preview, once per rendering (a new selection changes only the spectra).
      const c2 = this.corrected;
      if (c2 && this.#remeasuredFor !== c2) {
        this.remeasures = null;
        const r = await this.#track('Re-measuring', (p) => work.run({ type: 'remeasure', steps }, { progress: p }));
        if (this.corrected === c2) { this.remeasures = r; this.#remeasuredFor = c2; }
      }
    } catch (e) { this.#fail('Compare')(e); }
  };
  #remeasuredFor: unknown = null;

  exportTo = async (name: string, format: ExportFormat): Promise<boolean> => {
    const work = this.work, f = this.file;
    if (!work || !f) return false;
    let target;
    try {
      target = await this.bridge.beginExport(name, f.handle);
    } catch (e) { this.#fail('Export')(e); return false; }
    if (!target) return false;
    const steps = this.specs();
    const markers = this.markers.list;
    try {
      const r = await this.#track('Export', (p) => work.run({ type: 'export', steps, format, target: target.handle, description: `Restored from ${f.name}`, markers }, { progress: p }));
      const done = await this.bridge.finishExport(target.handle);
      const cues = r.cuePoints ? `, ${r.cuePoints} marker${r.cuePoints === 1 ? '' : 's'} as cue points` : '';
      this.note(`Exported ${done.name} (${r.container}, ${(done.bytes / 1e6).toFixed(1)} MB, ${steps.length} step${steps.length === 1 ? '' : 's'} in its history${cues}).`);
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
    const text = sessionText({ name: this.file.name, path: this.file.path, sizeBytes: this.file.sizeBytes, audioMd5: this.checksum }, this.steps.steps, this.markers.list);
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
      this.markers.reset(s.markers);
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
