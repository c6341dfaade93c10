/** Drawing helpers shared by the canvas views. */
import { columnsFromPyramid, type PeakPyramid } from './peaks.ts';

/** h:mm:ss.mmm (hours only when needed). */
export function formatTime(seconds: number, withMs = true): string {
  const neg = seconds < 0;
  let t = Math.abs(seconds);
  const h = Math.floor(t / 3600); t -= h * 3600;
  const m = Math.floor(t / 60); t -= m * 60;
  const s = Math.floor(t);
  const ms = Math.round((t - s) * 1000);
  const ss = String(ms === 1000 ? s + 1 : s).padStart(2, '0');
  const frac = withMs ? '.' + String(ms === 1000 ? 0 : ms).padStart(3, '0') : '';
  return `${neg ? '−' : ''}${h > 0 ? `${h}:${String(m).padStart(2, '0')}` : String(m)}:${ss}${frac}`;
}

/** A "nice" tick step (1, 2, 5 × 10^k seconds, and minute/hour steps) for at least `minSeconds`. */
export function tickStep(minSeconds: number): number {
  const steps = [0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1800, 3600, 7200];
  return steps.find((s) => s >= minSeconds) ?? 7200;
}

const colours = new Map<string, string>();

/**
 * Canvas colours from the palette variables, read once each: getComputedStyle forces a style
 * recalculation, which is too dear to do on every frame.
 */
export function cssColor(name: string, fallback: string): string {
  let v = colours.get(name);
  if (v === undefined) {
    v = getComputedStyle(document.documentElement).getPropertyValue(name).trim() || fallback;
    colours.set(name, v);
  }
  return v;
}

/** Keeps a canvas's backing store at its CSS size × devicePixelRatio; returns the 2D context. */
export function fitCanvas(canvas: HTMLCanvasElement): { ctx: CanvasRenderingContext2D; w: number; h: number; dpr: number } {
  const dpr = window.devicePixelRatio || 1;
  const w = Math.max(1, Math.round(canvas.clientWidth * dpr));
  const h = Math.max(1, Math.round(canvas.clientHeight * dpr));
  if (canvas.width !== w || canvas.height !== h) { canvas.width = w; canvas.height = h; }
  return { ctx: canvas.getContext('2d')!, w, h, dpr };
}

const scratch = { min: new Float32Array(0), max: new Float32Array(0) };

/**
 * Draws one channel's min/max envelope for the time range [t0, t0 + w·secondsPerPx) into the band
 * [top, top + height). Returns false when zoomed closer than the cache (samples needed).
 */
export function drawEnvelope(
  ctx: CanvasRenderingContext2D, p: PeakPyramid, channel: number, offsetSeconds: number,
  t0: number, secondsPerPx: number, w: number, top: number, height: number, color: string,
): boolean {
  if (scratch.min.length < w) { scratch.min = new Float32Array(w); scratch.max = new Float32Array(w); }
  const mn = scratch.min.subarray(0, w), mx = scratch.max.subarray(0, w);
  const fpp = secondsPerPx * p.sampleRateHz;
  if (!columnsFromPyramid(p, channel, (t0 - offsetSeconds) * p.sampleRateHz, fpp, mn, mx)) return false;
  // One polygon per run of columns (upper edge left to right, lower edge back): a single fill is
  // far cheaper to rasterise than one rectangle per column.
  const mid = top + height / 2, half = height / 2 - 1;
  ctx.fillStyle = color;
  ctx.beginPath();
  let x = 0;
  while (x < w) {
    while (x < w && Number.isNaN(mn[x]!)) x++;
    const start = x;
    while (x < w && !Number.isNaN(mn[x]!)) x++;
    if (x === start) break;
    for (let i = start; i < x; i++) {
      const y = Math.round(mid - Math.min(1, mx[i]!) * half);
      if (i === start) ctx.moveTo(i, y); else ctx.lineTo(i, y);
      ctx.lineTo(i + 1, y);
    }
    for (let i = x - 1; i >= start; i--) {
      const y = Math.max(Math.round(mid - Math.max(-1, mn[i]!) * half), Math.round(mid - Math.min(1, mx[i]!) * half) + 1);
      ctx.lineTo(i + 1, y);
      ctx.lineTo(i, y);
    }
    ctx.closePath();
  }
  ctx.fill();
  return true;
}

/** Draws samples as a line (close zoom). */
export function drawSamples(
  ctx: CanvasRenderingContext2D, data: Float32Array, rate: number, dataStartSeconds: number,
  t0: number, secondsPerPx: number, w: number, top: number, height: number, color: string,
): void {
  const mid = top + height / 2, half = height / 2 - 1;
  ctx.strokeStyle = color;
  ctx.lineWidth = 1;
  ctx.beginPath();
  const i0 = Math.max(0, Math.floor((t0 - dataStartSeconds) * rate) - 1);
  const i1 = Math.min(data.length, Math.ceil((t0 + w * secondsPerPx - dataStartSeconds) * rate) + 1);
  for (let i = i0; i < i1; i++) {
    const x = ((dataStartSeconds + i / rate - t0) / secondsPerPx);
    const y = mid - Math.max(-1, Math.min(1, data[i]!)) * half;
    if (i === i0) ctx.moveTo(x, y); else ctx.lineTo(x, y);
  }
  ctx.stroke();
}

/** Frame-time record read by the browser test (ms per draw). */
export function recordDraw(ms: number): void {
  const g = globalThis as { __reelwrightDraws?: number[] };
  (g.__reelwrightDraws ??= []).push(ms);
  if (g.__reelwrightDraws.length > 5000) g.__reelwrightDraws.splice(0, 1000);
}
