/**
 * The editor's state and actions: one recording at a time. Views read it; components call its
 * actions. Heavy work goes to two workers (views / work) through Engine.
 */
import { getContext, setContext } from 'svelte';
import type { Bridge, OpenedFile } from '../../../main/bridge/contract.ts';
import type { Finding, ParamValue, ParamValues } from '../../../dsp/ops/types.ts';
import { Engine, JobError, type Task } from '../lib/engine.ts';
import { rememberRecent, type RecentItem } from '../lib/recent.ts';
import { loadAnalysisParams, saveAnalysisParams } from '../lib/analysis-settings.ts';
import { BASE_BUCKET_FRAMES, pyramidFromParts, type PeakPyramid } from '../lib/peaks.ts';
import type { Session } from '../lib/session-file.ts';
import type { DiagnoseResult } from '../../../dsp/ops/diagnose.ts';
import type { OpenResult, PreviewResult, Remeasure, SpectrumPair, StepSpec } from '../worker/protocol.ts';
import type * as ChainRules from './chain.ts';
import type { StepNote } from '../lib/chain-notes.ts';
import { correctedEnd, piecesFor, toCorrected, toOriginal, type Piece, type Placement } from '../lib/timebase.ts';
import { MarkersState } from './markers.svelte.ts';
import { Player } from './player.svelte.ts';
import { StepsState } from './steps.svelte.ts';
import { Timeline } from './timeline.svelte.ts';

/** The chain's rules (state/chain.ts), loaded on demand. */
export type Chain = typeof ChainRules;
/** The modules loaded when first used: sessions, previews and Compare (each its own chunk). */
const sessions = () => import('./sessions.ts');
const render = () => import('./render.ts');

export interface TaskView { id: number; label: string; fraction: number; cancel: () => void; cancelling?: boolean }
/** A question the editor asks before doing something that cannot be undone (lib/dialog.ts draws it). */
export interface Question {
  readonly title: string;
  readonly text: string;
  readonly choices: readonly { readonly label: string; readonly value: string; readonly primary?: boolean }[];
  /** The answer Escape gives (the safe one). */
  readonly cancel: string;
  readonly testid?: string;
  readonly answer: (value: string) => void;
}
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
  /** A file that could not be opened: shown in place of the recording (the previous one stays open behind it). */
  openError = $state.raw<{ name: string; message: string } | null>(null);
  /** The file being opened (its header read), before it replaces the current one. */
  opening = $state<string | null>(null);
  /** Where the examination stands: the findings panel never says "Examining…" once it has ended. */
  diagnosisState = $state<'idle' | 'running' | 'done' | 'failed' | 'cancelled'>('idle');
  diagnosisError = $state<string | null>(null);
  /** The overview could not be built (a file damaged past its header). */
  overviewError = $state<string | null>(null);
  /** Analysis settings (op name → values), used by every examination of this and later recordings. */
  analysisParams = $state.raw<Record<string, ParamValues>>({});
  question = $state.raw<Question | null>(null);
  /** The spectrograms' colour range (dBFS) and the band of frequencies they show (null: all). */
  spectroRange = $state.raw<{ floorDb: number; topDb: number }>({ floorDb: -110, topDb: -10 });
  spectroBand = $state.raw<readonly [number, number] | null>(null);
  /** Vertical zoom of the waveform: full scale is this many lane heights (1 … 64). */
  waveZoom = $state(1);
  zoomAmplitude = (by: number) => { this.waveZoom = Math.max(1, Math.min(64, this.waveZoom * by)); };
  shortcutsOpen = $state(false);
  /** The steps' version when they were last saved (or opened): other versions are unsaved work. */
  savedVersion = $state(0);
  /** A session opened on a recording whose checksum is still being computed: its steps wait. */
  sessionWaiting = $state.raw<Session | null>(null);
  /** The export under way (state/export.ts), which Cancel stops. */
  exportTask: Task<unknown> | null = null;
  /** The preview under way (state/render.ts): a new one replaces it. */
  previewTask: Task<PreviewResult> | null = null;
  /** The rendering whose steps were last measured again (state/render.ts). */
  remeasuredFor: unknown = null;
  work = $state.raw<Engine | null>(null);
  /** The chain's rules once loaded (loadChain); everything that reads them re-runs when they arrive. */
  chain = $state.raw<Chain | null>(null);
  #chainLoading: Promise<Chain> | null = null;
  #taskId = 0;
  #noteId = 0;

  constructor(readonly bridge: Bridge) {
    const self = this;
    this.analysisParams = loadAnalysisParams();
    this.player = new Player({
      get view() { return self.view; },
      timeline: this.timeline,
      get sampleRateHz() { return self.opened?.layout.sampleRateHz ?? 48000; },
      get correctedMatchDb() { return self.correctedMatchDb; },
      get hasCorrected() { return self.corrected !== null; },
      beforeSwitch: (to) => self.rebase(self.base, to === 'processed' && self.corrected ? 'corrected' : 'original'),
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
  rebase(from: 'original' | 'corrected', to: 'original' | 'corrected', old = this.corrected, next = this.corrected): void {
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

  /** The way each step's main value is set, as last chosen on its card (lib/param-form.ts MODES). */
  stepModes = $state.raw<Record<string, string>>({});
  chooseMode = (stepId: string, op: string, mode: string) => {
    const s = this.steps.steps.find((x) => x.id === stepId);
    if (!s) return;
    this.stepModes = { ...this.stepModes, [stepId]: mode };
    // Text typed into the fields of the way left behind no longer counts.
    this.typing = Object.fromEntries(Object.entries(this.typing).filter(([k]) => !k.startsWith(stepId + ':')));
    if (this.chain) this.steps.replaceParams(stepId, this.chain.switchMode(op, s.params, mode), 'change how the speed is set');
  };

  /** Text being typed that is not a valid value yet, by `stepId:param`. */
  typing = $state.raw<Record<string, string>>({});
  setTyping = (stepId: string, param: string, message: string | null) => {
    const key = `${stepId}:${param}`;
    if ((this.typing[key] ?? null) === message) return;
    const next = { ...this.typing };
    if (message === null) delete next[key]; else next[key] = message;
    this.typing = next;
  };

  /**
   * Loads the chain's rules (state/chain.ts: the registry's specs, the parameter checks, the
   * cards' notes) once; every way of adding a step waits for them, so no step exists without them.
   */
  loadChain = (): Promise<Chain> => (this.#chainLoading ??= import('./chain.ts').then(
    (m) => (this.chain = m),
    (e: unknown) => { this.#chainLoading = null; throw e; },
  ));

  /** What stops each enabled step from rendering, checked before rendering (lib/param-form.ts), by step id. */
  get stepProblems(): Map<string, Map<string, string>> {
    return this.chain?.problemsOf(this) ?? new Map();
  }

  /** Enabled steps that cannot render as set. */
  get blockedSteps(): number {
    const p = this.stepProblems;
    return this.steps.enabled.filter((s) => p.has(s.id)).length;
  }

  /** What each step card says about time (lib/chain-notes.ts), by step id. */
  get stepNotes(): Map<string, StepNote[]> {
    return this.chain?.notesOf(this) ?? new Map();
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
  /** The corrections "Add a correction…" offers; null until the chain's rules have arrived. */
  get correctionOps() { return this.chain?.corrections() ?? null; }
  /** The corrected preview no longer matches the steps. */
  get stale(): boolean { return this.corrected !== null && this.corrected.version !== this.steps.version; }
  get correctedMatchDb(): number {
    const p = this.corrected?.preview;
    if (!p || !this.matchLoudness) return 0;
    return Math.max(-24, Math.min(24, p.originalRmsDbfs - p.processedRmsDbfs));
  }

  /** The recording is open and drawn: exporting, saving and rendering make sense. */
  get ready(): boolean { return this.opened !== null && this.peaks !== null && this.overviewError === null; }

  /** Corrections or markers that a new recording would throw away unsaved. */
  get dirty(): boolean {
    return this.file !== null && (this.steps.steps.length > 0 || this.markers.list.length > 0) && this.steps.version !== this.savedVersion;
  }

  /** Asks a question in a dialog; resolves with the chosen value (Escape: the cancel value). */
  ask(q: Omit<Question, 'answer'>): Promise<string> {
    return new Promise((resolve) => {
      this.question?.answer(this.question.cancel);
      this.question = { ...q, answer: (v) => { this.question = null; resolve(v); } };
    });
  }

  /** Before replacing the recording: unsaved corrections are only thrown away when the user says so. */
  async mayDiscard(what: string): Promise<boolean> {
    if (!this.dirty) return true;
    const n = this.steps.steps.length, m = this.markers.list.length;
    const parts = [n ? `${n} correction${n === 1 ? '' : 's'}` : '', m ? `${m} marker${m === 1 ? '' : 's'}` : ''].filter(Boolean).join(' and ');
    const a = await this.ask({
      title: 'Unsaved corrections',
      text: `${what} closes ${this.file?.name ?? 'this recording'}, and its ${parts} ${n + m === 1 ? 'has' : 'have'} not been saved in a session.`,
      choices: [
        { label: 'Keep working', value: 'keep' },
        { label: 'Save the session first', value: 'save' },
        { label: 'Discard them', value: 'discard', primary: true },
      ],
      cancel: 'keep',
      testid: 'discard-dialog',
    });
    if (a === 'save') return await this.saveSession();
    return a === 'discard';
  }

  note(text: string, tone: Note['tone'] = 'info'): void {
    const n = { id: ++this.#noteId, text, tone };
    this.notes = [...this.notes.slice(-4), n];
    setTimeout(() => (this.notes = this.notes.filter((x) => x.id !== n.id)), tone === 'error' ? 12000 : 6000);
  }

  /** Runs a job with a row (progress, Cancel) in the task strip. */
  track<T>(label: string, start: (progress: (f: number, l: string) => void) => Task<T>): Promise<T> {
    const id = ++this.#taskId;
    let task: Task<T> | null = null;
    const cancel = () => {
      task?.cancel();
      this.tasks = this.tasks.map((t) => (t.id === id ? { ...t, cancelling: true, label: `${t.label} (stopping…)` } : t));
    };
    this.tasks = [...this.tasks, { id, label, fraction: 0, cancel }];
    task = start((fraction, l) => {
      this.tasks = this.tasks.map((t) => (t.id === id ? { ...t, fraction, label: l && l !== 'done' ? `${label}: ${l}` : label } : t));
    });
    return task.promise.finally(() => (this.tasks = this.tasks.filter((t) => t.id !== id)));
  }

  /** Reports a failed action in a note, in the editor's words (the fields' names, not command-line flags). */
  fail = (what: string) => (err: unknown) => {
    if (err instanceof JobError && err.superseded) return;
    if (err instanceof JobError && err.cancelled) { this.note(`${what}: cancelled`); return; }
    const m = err instanceof Error ? err.message : String(err);
    void this.loadChain().then((c) => c.errorWords(m), () => m).then((t) => this.note(`${what}: ${t}`, 'error'));
  };

  /** At start: the recording or session the app was started with, else (unless told not to) the demo. */
  openAtStart = async (demo: boolean) => {
    try {
      const l = await this.bridge.launched();
      if (l?.kind === 'audio') return await this.open(l.file);
      if (l?.kind === 'session') { const m = await sessions(); return await m.resumeSession(this, m.parseSession(l.session.text)); }
    } catch (e) { this.fail('Opening the file the app was started with')(e); return; }
    if (demo) await this.openDemo();
  };

  openDemo = async () => {
    if (!(await this.mayDiscard('Opening the demo'))) return;
    try {
      const f = await this.bridge.openDemo();
      if (!f) { this.note('No demo recording is installed (run: npm run demo). Open a file instead.', 'warn'); return; }
      await this.open(f);
    } catch (e) { this.fail('Opening the demo')(e); }
  };

  pickFile = async () => {
    if (!(await this.mayDiscard('Opening another recording'))) return;
    try {
      const f = await this.bridge.pickAudioFile();
      if (f) await this.open(f);
    } catch (e) { this.fail('Opening')(e); }
  };

  /**
   * A file dropped on the window: the bridge says whether it is a recording (opened as if
   * picked) or a session (opened as if picked from Open session); anything else is refused with
   * the reason, in place of the recording.
   */
  openDropped = async (file: File) => {
    let d;
    try {
      d = await this.bridge.dropped(file);
    } catch (e) { this.openError = { name: file.name, message: openErrorWords(e, file.name) }; return; }
    // The reason names the file, which the panel's title already does: "notes.txt is neither …" reads "It is neither …".
    if (d.kind === 'refused') { this.openError = { name: d.name, message: d.reason.startsWith(d.name + ' ') ? `It${d.reason.slice(d.name.length)}` : d.reason }; return; }
    if (d.kind === 'session') { await (await sessions()).openDropped(this, d.session); return; }
    if (!(await this.mayDiscard('Opening another recording'))) { void this.bridge.closeFile(d.file.handle).catch(() => {}); return; }
    await this.open(d.file);
  };

  /** Reopens a recent item: a session from its saved text; a recording through the picker (a page cannot reopen a file by name). */
  openRecent = async (r: RecentItem) => {
    if (r.kind === 'session' && r.text) {
      if (!(await this.mayDiscard('Opening a session'))) return;
      await (await sessions()).openRecent(this, r.name, r.text);
      return;
    }
    if (this.bridge.mode === 'web') this.note(`Choose ${r.name} in the file picker: the browser does not let a page reopen a file by itself.`);
    await this.pickFile();
  };

  /** Back to the recording that was open before a file failed to open. */
  dismissOpenError = () => { this.openError = null; };

  /**
   * Opens a recording. The header is read in new workers first: a file that cannot be opened
   * leaves the current recording (and its workers) as they were and shows what is wrong.
   * Otherwise every job of the old recording ends (its workers are stopped) and the new one is
   * drawn, examined and checksummed.
   */
  async open(f: OpenedFile): Promise<boolean> {
    const view = new Engine(this.bridge, 'views');
    const work = new Engine(this.bridge, 'work');
    this.opening = f.name;
    const blob = 'blobOf' in this.bridge ? (this.bridge as { blobOf(h: string): Blob | undefined }).blobOf(f.handle) : undefined;
    const ref = { handle: f.handle, name: f.name, sizeBytes: f.sizeBytes, ...(blob ? { blob } : {}) };
    let opened: OpenResult;
    try {
      [opened] = await Promise.all([view.run({ type: 'open', file: ref }).promise, work.run({ type: 'open', file: ref }).promise]);
    } catch (e) {
      view.terminate(); work.terminate();
      if (this.file?.handle !== f.handle) void this.bridge.closeFile(f.handle).catch(() => {});
      this.opening = null;
      this.openError = { name: f.name, message: openErrorWords(e, f.name) };
      return false;
    } finally {
      if (this.opening === f.name) this.opening = null;
    }
    this.player.stop();
    this.view?.terminate();
    this.work?.terminate();
    this.tasks = [];
    if (this.file && this.file.handle !== f.handle) void this.bridge.closeFile(this.file.handle).catch(() => {});
    this.view = view;
    this.work = work;
    this.file = f;
    this.openError = null;
    this.overviewError = null;
    this.diagnosisError = null;
    this.diagnosisState = 'running';
    this.exportOpen = false;
    this.compareOpen = false;
    this.peaks = null; this.corrected = null; this.diagnosis = null;
    this.spectra = null; this.remeasures = null; this.checksum = null; this.overviewMs = null; this.compared = null;
    this.remeasuredFor = null;
    this.sessionWaiting = null;
    if (this.player.which !== 'original') this.player.which = 'original';
    this.steps.reset([]);
    this.savedVersion = this.steps.version;
    this.opened = opened;
    this.markers.reset(opened.markers);
    this.timeline.reset(opened.layout.frames / opened.layout.sampleRateHz);
    rememberRecent({ kind: 'recording', name: f.name, path: f.path, sizeBytes: f.sizeBytes });
    const t0 = performance.now();
    // The overview first (it has both cores to itself), then the diagnosis and the checksum.
    // Both workers build half of the overview each (two cores), joined here.
    const { frames, sampleRateHz } = opened.layout;
    const half = Math.ceil(frames / 2 / BASE_BUCKET_FRAMES) * BASE_BUCKET_FRAMES;
    const parts = frames > 8 * 1024 * 1024
      ? [{ e: view, s: 0, t: half }, { e: work, s: half, t: frames }]
      : [{ e: view, s: 0, t: frames }];
    const overview = this.track('Overview', (p) => {
      const fr = parts.map(() => 0);
      const tasks = parts.map((x, i) => x.e.run({ type: 'overview', startFrame: x.s, endFrame: x.t }, { progress: (f) => { fr[i] = f; p(fr.reduce((a, b) => a + b, 0) / parts.length, ''); } }));
      return { promise: Promise.all(tasks.map((t) => t.promise)), cancel: () => tasks.forEach((t) => t.cancel()) };
    }).then((levels) => {
      if (this.view !== view) return;
      this.peaks = pyramidFromParts(levels, frames, sampleRateHz);
      this.overviewMs = performance.now() - t0;
    }, (e: unknown) => {
      if (this.view !== view || (e instanceof JobError && e.superseded)) return;
      this.overviewError = e instanceof JobError && e.cancelled ? 'Drawing its overview was cancelled: open it again to see it.' : openErrorWords(e, f.name);
    });
    void overview
      .then(() => (this.work === work ? this.#examine(work) : null))
      .then(() => this.work === work ? this.track('Checksum', (p) => work.run({ type: 'checksum' }, { progress: p })) : null)
      .then((sum) => { if (sum && this.work === work) this.checksum = sum; }, this.fail('Checksum'));
    return true;
  }

  /** Runs every analysis with the editor's analysis settings; the findings panel follows its state. */
  async #examine(work: Engine): Promise<void> {
    this.diagnosisState = 'running';
    this.diagnosisError = null;
    try {
      const d = await this.track('Examining', (p) => work.run({ type: 'diagnose', params: this.analysisParams }, { progress: p }));
      if (this.work !== work) return;
      this.diagnosis = d;
      this.diagnosisState = 'done';
    } catch (e) {
      if (this.work !== work || (e instanceof JobError && e.superseded)) return;
      this.diagnosisState = e instanceof JobError && e.cancelled ? 'cancelled' : 'failed';
      this.diagnosisError = e instanceof Error ? e.message : String(e);
    }
  }

  /** Examines the recording again (after the analysis settings changed, or a cancelled run). */
  reexamine = async () => {
    const work = this.work;
    if (!work || !this.opened || this.diagnosisState === 'running') return;
    this.diagnosis = null;
    await this.#examine(work);
  };

  setAnalysisParam = (op: string, name: string, v: ParamValue) => {
    const cur = { ...(this.analysisParams[op] ?? {}) };
    if (v === undefined) delete cur[name]; else cur[name] = v;
    this.analysisParams = { ...this.analysisParams, [op]: cur };
    saveAnalysisParams(this.analysisParams);
  };

  get findings(): Finding[] {
    return this.diagnosis?.findings ?? [];
  }

  /** Adds the correction a finding suggests (state/chain.ts places it in the chain). */
  addFromFinding = async (f: Finding) => { (await this.loadChain()).addFromFinding(this, f); };

  addCorrection = async (name: string) => { (await this.loadChain()).addCorrection(this, name); };

  /** Renders the chain over the part a preview covers, then compares (state/render.ts). */
  preview = async () => { await this.loadChain(); await (await render()).preview(this); };

  /** Spectra before and after, and every step measured again (state/render.ts). */
  compare = async () => { await (await render()).compare(this); };

  /** Stops the export under way; the bridge removes what it had written. */
  cancelExport = () => { this.exportTask?.cancel(); };

  /** Saves the steps and markers in a session file (state/sessions.ts). */
  saveSession = async (): Promise<boolean> => (await sessions()).saveSession(this);

  /** A session waiting for its recording (web mode asks the user to pick it: a picker needs a click). */
  pendingSession = $state.raw<Session | null>(null);

  openSession = async () => {
    if (!(await this.mayDiscard('Opening a session'))) return;
    await (await sessions()).openSession(this);
  };

  /** Opens a session's recording and applies its steps once the checksum matches (state/sessions.ts). */
  resumeSession = async (s: Session) => { await (await sessions()).resumeSession(this, s); };
}

/** An open failure in words: the reader's one line without a leading copy of the file name. */
export function openErrorWords(e: unknown, name: string): string {
  const m = e instanceof Error ? e.message : String(e);
  const t = m.startsWith(name + ': ') ? m.slice(name.length + 2) : m;
  return t.charAt(0).toUpperCase() + t.slice(1);
}

const KEY = Symbol('editor');
export const setupEditor = (bridge: Bridge) => setContext(KEY, new Editor(bridge));
export const useEditor = () => getContext<Editor>(KEY);
