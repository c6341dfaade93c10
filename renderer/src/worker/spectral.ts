/**
 * Spectra for the views: long-term average spectra (Welch's method: Hann frames, 50 % overlap,
 * averaged power) for Compare, and spectrogram tiles on a log-frequency axis for the Spectrogram
 * view. Levels: a full-scale sine reads 0 dB at its bin (power scaled by (2/Σw)²).
 */
import { FftPlan } from '../../../dsp/core/fft.ts';
import { makeWindow } from '../../../dsp/core/windows.ts';
import { CancelledError } from '../../../dsp/errors.ts';
import type { AudioSource } from '../../../dsp/source.ts';
import { FLOOR_DB, SPECTRO_FFT, SPECTRO_LOW_HZ, SPECTRO_ROWS, TILE_COLUMNS, TOP_DB } from './protocol.ts';

/** A source placed on the editor's timeline, starting at `offsetSeconds`. */
export interface Placed {
  readonly source: AudioSource;
  readonly offsetSeconds: number;
}

class FrameMeter {
  readonly plan: FftPlan;
  readonly window: Float64Array;
  readonly frame: Float64Array;
  readonly spec: Float64Array;
  readonly power: Float64Array;
  readonly scale: number;
  constructor(readonly size: number) {
    this.plan = new FftPlan(size);
    this.window = makeWindow('hann', size);
    this.frame = new Float64Array(size);
    this.spec = new Float64Array(size + 2);
    this.power = new Float64Array(size / 2 + 1);
    const sum = this.window.reduce((a, b) => a + b, 0);
    this.scale = (2 / sum) ** 2;
  }
  /** Adds the windowed power spectrum of `x[at … at+size)` (zeros outside) into `acc`. */
  add(x: Float64Array, at: number, acc: Float64Array): void {
    const n = this.size;
    for (let i = 0; i < n; i++) {
      const k = at + i;
      this.frame[i] = k >= 0 && k < x.length ? x[k]! * this.window[i]! : 0;
    }
    this.plan.realForward(this.frame, this.spec);
    for (let b = 0; b <= n / 2; b++) acc[b]! += (this.spec[2 * b]! ** 2 + this.spec[2 * b + 1]! ** 2) * this.scale;
  }
}

async function readRange(src: AudioSource, start: number, end: number): Promise<Float64Array[]> {
  const lo = Math.max(0, start), hi = Math.min(src.frames, end);
  const out = Array.from({ length: src.channelCount }, () => new Float64Array(Math.max(0, end - start)));
  if (hi <= lo) return out;
  let at = lo - start;
  for await (const b of src.blocks({ startFrame: lo, endFrame: hi })) {
    for (let c = 0; c < out.length; c++) out[c]!.set(b[c]!, at);
    at += b[0]!.length;
  }
  return out;
}

/**
 * Long-term average power spectrum of [startSeconds, endSeconds) of a placed source, averaged
 * over channels. Long regions are sampled with at most `maxFrames` evenly spread frames.
 */
export async function longTermSpectrum(p: Placed, startSeconds: number, endSeconds: number, fftSize: number, signal: { aborted: boolean }, maxFrames = 400): Promise<Float64Array> {
  const src = p.source;
  const rate = src.sampleRateHz;
  const start = Math.max(0, Math.round((startSeconds - p.offsetSeconds) * rate));
  const end = Math.min(src.frames, Math.round((endSeconds - p.offsetSeconds) * rate));
  const meter = new FrameMeter(fftSize);
  const acc = new Float64Array(fftSize / 2 + 1);
  const hop = fftSize / 2;
  let count = 0;
  const span = end - start;
  if (span <= 0) return acc.fill(1e-30);
  const frames = Math.max(1, Math.floor((span - fftSize) / hop) + 1);
  if (frames <= maxFrames) {
    const data = await readRange(src, start, end);
    for (let f = 0; f < frames; f++) {
      if (signal.aborted) throw new CancelledError('cancelled');
      for (const ch of data) meter.add(ch, f * hop, acc);
      count += data.length;
    }
  } else {
    for (let f = 0; f < maxFrames; f++) {
      if (signal.aborted) throw new CancelledError('cancelled');
      const at = start + Math.floor((f * (span - fftSize)) / (maxFrames - 1));
      const data = await readRange(src, at, at + fftSize);
      for (const ch of data) meter.add(ch, 0, acc);
      count += data.length;
    }
  }
  for (let b = 0; b < acc.length; b++) acc[b] = acc[b]! / Math.max(1, count);
  return acc;
}

/** Power in dB with a floor. */
export const toDb = (power: Float64Array, floorDb = -160): Float32Array =>
  Float32Array.from(power, (v) => Math.max(floorDb, 10 * Math.log10(v + 1e-30)));

/** Seconds per spectrogram column at a zoom level. */
export const columnSeconds = (level: number, baseColumnSeconds: number) => baseColumnSeconds * 4 ** level;

/** Row → FFT bin range for a log-frequency axis from SPECTRO_LOW_HZ to Nyquist. */
function rowBins(rate: number, n: number): Int32Array {
  const nyq = rate / 2;
  const bins = new Int32Array(SPECTRO_ROWS * 2);
  const ratio = nyq / SPECTRO_LOW_HZ;
  for (let r = 0; r < SPECTRO_ROWS; r++) {
    const f0 = SPECTRO_LOW_HZ * ratio ** ((r - 0.5) / (SPECTRO_ROWS - 1));
    const f1 = SPECTRO_LOW_HZ * ratio ** ((r + 0.5) / (SPECTRO_ROWS - 1));
    const b0 = Math.max(0, Math.min(n / 2, Math.round((f0 * n) / rate)));
    const b1 = Math.max(b0, Math.min(n / 2, Math.round((f1 * n) / rate)));
    bins[2 * r] = b0;
    bins[2 * r + 1] = b1;
  }
  return bins;
}

/**
 * One spectrogram tile: TILE_COLUMNS columns starting at `index·TILE_COLUMNS` columns, each
 * `colSeconds` wide, SPECTRO_ROWS log-spaced rows, values 0–255 between FLOOR_DB and TOP_DB.
 * Wide columns average up to four frames spread across the column; narrow tiles read their span
 * once, wide ones read only the frames they need.
 */
export async function spectroTile(p: Placed, colSeconds: number, index: number, signal: { aborted: boolean }): Promise<Uint8Array> {
  const src = p.source;
  const rate = src.sampleRateHz;
  const n = SPECTRO_FFT;
  const meter = new FrameMeter(n);
  const rows = rowBins(rate, n);
  const out = new Uint8Array(TILE_COLUMNS * SPECTRO_ROWS);
  const acc = new Float64Array(n / 2 + 1);
  const colFrames = colSeconds * rate;
  const t0 = index * TILE_COLUMNS * colSeconds - p.offsetSeconds;
  const tileStart = Math.round(t0 * rate);
  const tileFrames = Math.round(TILE_COLUMNS * colFrames);
  if (tileStart + tileFrames + n < 0 || tileStart - n > src.frames) return out;
  const whole = tileFrames <= 1 << 20 ? await readRange(src, tileStart - n, tileStart + tileFrames + n) : null;
  // Wide columns average a few frames; read one by one, two per column keep tiles quick.
  const sub = Math.max(1, Math.min(whole ? 4 : 2, Math.floor(colFrames / n)));
  for (let c = 0; c < TILE_COLUMNS; c++) {
    if (signal.aborted) throw new CancelledError('cancelled');
    acc.fill(0);
    let count = 0;
    for (let j = 0; j < sub; j++) {
      const centre = tileStart + Math.round(c * colFrames + ((j + 0.5) * colFrames) / sub);
      const at = centre - n / 2;
      if (at + n <= 0 || at >= src.frames) continue;
      const data = whole ?? (await readRange(src, at, at + n));
      const offset = whole ? at - (tileStart - n) : 0;
      for (const ch of data) meter.add(ch, offset, acc);
      count += data.length;
    }
    if (count === 0) continue;
    for (let r = 0; r < SPECTRO_ROWS; r++) {
      let m = 0;
      for (let b = rows[2 * r]!; b <= rows[2 * r + 1]!; b++) if (acc[b]! > m) m = acc[b]!;
      const db = 10 * Math.log10(m / count + 1e-30);
      out[c * SPECTRO_ROWS + r] = Math.max(0, Math.min(255, Math.round(((db - FLOOR_DB) / (TOP_DB - FLOOR_DB)) * 255)));
    }
  }
  return out;
}
