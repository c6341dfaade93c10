/**
 * Playing through the Web Audio API, for the Player (state/player.svelte.ts, which holds what the
 * page shows). Plays a few seconds ahead in 1-second chunks fetched from the view worker (never
 * the whole file), fades in, loops the selection, meters the output and each channel, and stops
 * with a caution before a passage louder than LOUD_RMS_DBFS.
 */
import type { Player } from './player.svelte.ts';

const CHUNK_SECONDS = 1;
const AHEAD_SECONDS = 2.5;
/** Output RMS above this (dBFS, after the listening level) asks before playing on. */
export const LOUD_RMS_DBFS = -14;

interface Scheduled { at: number; pos: number; dur: number; node: AudioBufferSourceNode }

export class Playback {
  #splitAnalysers: { peak: AnalyserNode; loud: AnalyserNode }[] = [];
  #pre: GainNode | null = null;
  #chanBuf = new Float32Array(0);
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
  #busy = false;

  constructor(private readonly player: Player) {}

  /** Stops every chunk scheduled and the timers (the Player resets what it shows). */
  stop(): void {
    this.#gen++;
    if (this.#timer) clearInterval(this.#timer);
    this.#timer = null;
    cancelAnimationFrame(this.#raf);
    for (const s of this.#scheduled) { try { s.node.stop(); } catch { /* already stopped */ } }
    this.#scheduled = [];
  }

  setLevel(levelDb: number): void {
    if (this.#master && this.#ctx) this.#master.gain.setTargetAtTime(10 ** (levelDb / 20), this.#ctx.currentTime, 0.02);
  }

  async start(from: number, fade: number): Promise<void> {
    const pl = this.player, host = pl.host;
    pl.stop();
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
    const tl = host.timeline;
    const sel = tl.selection;
    if (pl.loop && sel && (from < sel.start || from >= sel.end)) from = sel.start;
    if (from >= tl.duration) from = sel?.start ?? 0;
    this.#master!.gain.cancelScheduledValues(ctx.currentTime);
    this.#master!.gain.setValueAtTime(0, ctx.currentTime);
    this.#master!.gain.linearRampToValueAtTime(10 ** (pl.gainDb() / 20), ctx.currentTime + fade);
    this.#nextAt = ctx.currentTime + 0.05;
    this.#nextPos = from;
    pl.playing = true;
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

  async #pump(gen: number): Promise<void> {
    const pl = this.player, host = pl.host;
    const ctx = this.#ctx, view = host.view;
    if (!ctx || !view || this.#busy) return;
    this.#busy = true;
    try {
      while (gen === this.#gen && this.#nextAt - ctx.currentTime < AHEAD_SECONDS) {
        const tl = host.timeline;
        const stopAt = pl.loop && tl.selection ? tl.selection.end : tl.duration;
        if (this.#nextPos >= stopAt - 1e-6) {
          if (pl.loop && tl.selection) this.#nextPos = tl.selection.start;
          else {
            if (this.#scheduled.every((s) => s.at + s.dur <= ctx.currentTime)) { pl.stop(); tl.playhead = 0; }
            break;
          }
        }
        const dur = Math.min(CHUNK_SECONDS, stopAt - this.#nextPos);
        const rate = host.sampleRateHz;
        const chunk = await view.run({ type: 'chunk', which: pl.which, startFrame: Math.round(this.#nextPos * rate), frames: Math.max(1, Math.round(dur * rate)) }).promise;
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
    const pl = this.player;
    if (pl.loudAcceptedAtDb !== null && pl.levelDb <= pl.loudAcceptedAtDb) return false;
    let sum = 0, n = 0;
    for (const c of chunk) { for (let i = 0; i < c.length; i++) sum += c[i]! * c[i]!; n += c.length; }
    const rms = 10 * Math.log10(sum / Math.max(1, n) + 1e-20) + pl.gainDb();
    if (rms <= LOUD_RMS_DBFS) return false;
    pl.stop();
    pl.caution = { reason: 'loud', detail: `The next passage plays at ${rms.toFixed(1)} dBFS RMS at this listening level.` };
    return true;
  }

  #updatePosition(): void {
    const ctx = this.#ctx;
    if (!ctx) return;
    const now = ctx.currentTime;
    const s = this.#scheduled.find((x) => now >= x.at && now < x.at + x.dur);
    if (s) this.player.host.timeline.playhead = s.pos + (now - s.at);
  }

  #meter(): void {
    const a = this.#analyser;
    if (!a) return;
    const pl = this.player;
    a.getFloatTimeDomainData(this.#meterBuf);
    let peak = 0;
    for (const v of this.#meterBuf) { const x = Math.abs(v); if (x > peak) peak = x; }
    const db = 20 * Math.log10(peak + 1e-9);
    pl.meterDb = Math.max(db, pl.meterDb - 1.5);
    pl.meterPeakDb = Math.max(db, pl.meterPeakDb - 0.3);
    const prev = pl.channelMeters;
    pl.channelMeters = this.#splitAnalysers.map(({ peak: pa, loud }, c) => {
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
