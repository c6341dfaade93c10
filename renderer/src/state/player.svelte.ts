/**
 * Listening through the Web Audio API. Plays a few seconds ahead in 1-second chunks fetched from
 * the view worker (never the whole file), switches original ⇄ corrected at the same position,
 * matches loudness between them, loops the selection, meters the output, and guards the ears:
 * a caution before the first playback and before loud passages, a moderate starting level and
 * a fade-in.
 */
import type { Engine } from '../lib/engine.ts';
import type { Which } from '../worker/protocol.ts';
import type { Timeline } from './timeline.svelte.ts';

const CHUNK_SECONDS = 1;
const AHEAD_SECONDS = 2.5;
const FADE_IN_SECONDS = 0.5;
/** Output RMS above this (dBFS, after the listening level) asks before playing on. */
export const LOUD_RMS_DBFS = -14;

interface Scheduled { at: number; pos: number; dur: number; node: AudioBufferSourceNode }

export interface PlayerHost {
  readonly view: Engine | null;
  readonly timeline: Timeline;
  readonly sampleRateHz: number;
  /** dB to add to the corrected signal so it sounds as loud as the original (0 when off). */
  readonly correctedMatchDb: number;
  readonly hasCorrected: boolean;
  /** Called before switching versions: the host moves the time line so the position stays on the same programme. */
  beforeSwitch?(to: Which): void;
}

export class Player {
  playing = $state(false);
  which = $state<Which>('original');
  loop = $state(false);
  /** Listening level in dB applied to everything played. */
  levelDb = $state(-12);
  meterDb = $state(-120);
  meterPeakDb = $state(-120);
  /**
   * Per channel, of the programme as played (before the listening level): sample peak (dBFS, held)
   * and the loudness of the last ~0.4 s, K-weighted as BS.1770 (LUFS; Web Audio's shelving filter
   * approximates the standard's first stage).
   */
  channelMeters = $state.raw<readonly { peakDb: number; heldDb: number; lufs: number }[]>([]);
  #splitAnalysers: { peak: AnalyserNode; loud: AnalyserNode }[] = [];
  #pre: GainNode | null = null;
  #chanBuf = new Float32Array(0);
  caution = $state<null | { reason: 'first' | 'loud'; detail: string }>(null);
  #accepted = false;
  #loudAcceptedAtDb: number | null = null;
  #ctx: AudioContext | null = null;
  #master: GainNode | null = null;
  #analyser: AnalyserNode | null = null;
  #scheduled: Scheduled[] = [];
  #gen = 0;
  #nextAt = 0;
  #nextPos = 0;
  #timer: ReturnType<typeof setInterval> | null = null;
  #raf = 0;
  #meterBuf = new Float32Array(2048);

  constructor(private readonly host: PlayerHost) {}

  toggle = () => (this.playing ? this.stop() : this.play());

  play = () => {
    if (!this.host.view) return;
    if (!this.#accepted) {
      this.caution = { reason: 'first', detail: '' };
      return;
    }
    this.#begin(this.host.timeline.playhead);
  };

  #begin(from: number, fade = FADE_IN_SECONDS): void {
    this.#start(from, fade).catch((e: unknown) => {
      this.stop();
      console.warn('playback stopped:', e);
    });
  }

  acceptCaution = () => {
    const c = this.caution;
    this.caution = null;
    this.#accepted = true;
    if (c?.reason === 'loud') this.#loudAcceptedAtDb = this.levelDb;
    this.#begin(this.host.timeline.playhead);
  };

  declineCaution = () => {
    this.caution = null;
  };

  stop = () => {
    this.#gen++;
    this.playing = false;
    if (this.#timer) clearInterval(this.#timer);
    this.#timer = null;
    cancelAnimationFrame(this.#raf);
    for (const s of this.#scheduled) { try { s.node.stop(); } catch { /* already stopped */ } }
    this.#scheduled = [];
    this.meterDb = -120;
    this.channelMeters = this.channelMeters.map(() => ({ peakDb: -120, heldDb: -120, lufs: -120 }));
  };

  /** A/B: the other version from the same position. */
  switchTo = (which: Which) => {
    if (which === 'processed' && !this.host.hasCorrected) return;
    if (this.which === which) return;
    this.host.beforeSwitch?.(which);
    this.which = which;
    if (this.playing) this.#begin(this.host.timeline.playhead, 0.01);
  };

  swap = () => this.switchTo(this.which === 'original' ? 'processed' : 'original');

  setLevel = (db: number) => {
    this.levelDb = Math.max(-40, Math.min(0, db));
    if (this.#master && this.#ctx) this.#master.gain.setTargetAtTime(10 ** (this.levelDb / 20), this.#ctx.currentTime, 0.02);
  };

  #gainDb(): number {
    return this.levelDb + (this.which === 'processed' ? this.host.correctedMatchDb : 0);
  }

  async #start(from: number, fade = FADE_IN_SECONDS): Promise<void> {
    this.stop();
    const gen = this.#gen;
    if (!this.#ctx) {
      this.#ctx = new AudioContext({ latencyHint: 'interactive' });
      this.#master = this.#ctx.createGain();
      this.#analyser = this.#ctx.createAnalyser();
      this.#analyser.fftSize = 2048;
      this.#master.connect(this.#analyser);
      this.#analyser.connect(this.#ctx.destination);
      // The programme's own levels, per channel, tapped before the listening level.
      this.#pre = this.#ctx.createGain();
      this.#pre.connect(this.#master);
      const n = 8; // the page shows as many as the recording has
      const split = this.#ctx.createChannelSplitter(n);
      this.#pre.connect(split);
      const win = Math.min(32768, 2 ** Math.ceil(Math.log2(0.4 * this.#ctx.sampleRate)));
      this.#splitAnalysers = Array.from({ length: n }, (_, c) => {
        const peak = this.#ctx!.createAnalyser();
        peak.fftSize = 2048;
        split.connect(peak, c);
        const shelf = this.#ctx!.createBiquadFilter();
        shelf.type = 'highshelf'; shelf.frequency.value = 1681.97; shelf.gain.value = 4.0;
        const hp = this.#ctx!.createBiquadFilter();
        hp.type = 'highpass'; hp.frequency.value = 38.14; hp.Q.value = 0.5;
        split.connect(shelf, c);
        shelf.connect(hp);
        const loud = this.#ctx!.createAnalyser();
        loud.fftSize = win;
        hp.connect(loud);
        return { peak, loud };
      });
    }
    await this.#ctx.resume();
    const ctx = this.#ctx;
    const tl = this.host.timeline;
    const sel = tl.selection;
    if (this.loop && sel && (from < sel.start || from >= sel.end)) from = sel.start;
    if (from >= tl.duration) from = sel?.start ?? 0;
    this.#master!.gain.cancelScheduledValues(ctx.currentTime);
    this.#master!.gain.setValueAtTime(0, ctx.currentTime);
    this.#master!.gain.linearRampToValueAtTime(10 ** (this.#gainDb() / 20), ctx.currentTime + fade);
    this.#nextAt = ctx.currentTime + 0.05;
    this.#nextPos = from;
    this.playing = true;
    await this.#pump(gen);
    if (gen !== this.#gen) return;
    this.#timer = setInterval(() => void this.#pump(gen), 200);
    const tick = () => {
      if (gen !== this.#gen) return;
      this.#updatePosition();
      this.#meter();
      this.#raf = requestAnimationFrame(tick);
    };
    this.#raf = requestAnimationFrame(tick);
  }

  #busy = false;
  async #pump(gen: number): Promise<void> {
    const ctx = this.#ctx, view = this.host.view;
    if (!ctx || !view || this.#busy) return;
    this.#busy = true;
    try {
      while (gen === this.#gen && this.#nextAt - ctx.currentTime < AHEAD_SECONDS) {
        const tl = this.host.timeline;
        const stopAt = this.loop && tl.selection ? tl.selection.end : tl.duration;
        if (this.#nextPos >= stopAt - 1e-6) {
          if (this.loop && tl.selection) this.#nextPos = tl.selection.start;
          else {
            if (this.#scheduled.every((s) => s.at + s.dur <= ctx.currentTime)) { this.stop(); tl.playhead = 0; }
            break;
          }
        }
        const dur = Math.min(CHUNK_SECONDS, stopAt - this.#nextPos);
        const rate = this.host.sampleRateHz;
        const chunk = await view.run({ type: 'chunk', which: this.which, startFrame: Math.round(this.#nextPos * rate), frames: Math.max(1, Math.round(dur * rate)) }).promise;
        if (gen !== this.#gen) return;
        if (this.#tooLoud(chunk)) return;
        const frames = chunk[0]?.length ?? 0;
        if (frames === 0) break;
        const chunkRate = Math.round(frames / dur);
        const buf = ctx.createBuffer(chunk.length, frames, chunkRate > 3000 ? chunkRate : rate);
        chunk.forEach((c, i) => buf.copyToChannel(c as Float32Array<ArrayBuffer>, i));
        const node = ctx.createBufferSource();
        node.buffer = buf;
        node.connect(this.#pre ?? this.#master!);
        const at = Math.max(this.#nextAt, ctx.currentTime + 0.01);
        node.start(at);
        this.#scheduled.push({ at, pos: this.#nextPos, dur, node });
        this.#scheduled = this.#scheduled.filter((s) => s.at + s.dur > ctx.currentTime - 1);
        this.#nextAt = at + dur;
        this.#nextPos += dur;
      }
    } finally {
      this.#busy = false;
    }
  }

  #tooLoud(chunk: Float32Array[]): boolean {
    if (this.#loudAcceptedAtDb !== null && this.levelDb <= this.#loudAcceptedAtDb) return false;
    let sum = 0, n = 0;
    for (const c of chunk) { for (let i = 0; i < c.length; i++) sum += c[i]! * c[i]!; n += c.length; }
    const rms = 10 * Math.log10(sum / Math.max(1, n) + 1e-20) + this.#gainDb();
    if (rms <= LOUD_RMS_DBFS) return false;
    this.stop();
    this.caution = { reason: 'loud', detail: `The next passage plays at ${rms.toFixed(1)} dBFS RMS at this listening level.` };
    return true;
  }

  #updatePosition(): void {
    const ctx = this.#ctx;
    if (!ctx) return;
    const now = ctx.currentTime;
    const s = this.#scheduled.find((x) => now >= x.at && now < x.at + x.dur);
    if (s) this.host.timeline.playhead = s.pos + (now - s.at);
  }

  #meter(): void {
    const a = this.#analyser;
    if (!a) return;
    a.getFloatTimeDomainData(this.#meterBuf);
    let peak = 0;
    for (const v of this.#meterBuf) { const x = Math.abs(v); if (x > peak) peak = x; }
    const db = 20 * Math.log10(peak + 1e-9);
    this.meterDb = Math.max(db, this.meterDb - 1.5);
    this.meterPeakDb = Math.max(db, this.meterPeakDb - 0.3);
    const prev = this.channelMeters;
    this.channelMeters = this.#splitAnalysers.map(({ peak: pa, loud }, c) => {
      if (this.#chanBuf.length < loud.fftSize) this.#chanBuf = new Float32Array(loud.fftSize);
      const b = this.#chanBuf.subarray(0, pa.fftSize);
      pa.getFloatTimeDomainData(b);
      let pk = 0;
      for (const v of b) { const x = Math.abs(v); if (x > pk) pk = x; }
      const lb = this.#chanBuf.subarray(0, loud.fftSize);
      loud.getFloatTimeDomainData(lb);
      let ms = 0;
      for (const v of lb) ms += v * v;
      ms /= lb.length;
      const peakDb = 20 * Math.log10(pk + 1e-9);
      const old = prev[c];
      return {
        peakDb: Math.max(peakDb, (old?.peakDb ?? -120) - 1.5),
        heldDb: Math.max(peakDb, (old?.heldDb ?? -120) - 0.15),
        // BS.1770: loudness = −0.691 + 10·log10(mean square of the K-weighted signal).
        lufs: ms > 0 ? -0.691 + 10 * Math.log10(ms) : -120,
      };
    });
  }
}
