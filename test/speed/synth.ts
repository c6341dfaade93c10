/**
 * Test material for the speed tests (synthesised here; no recordings). Everything that depends on
 * speed is evaluated in closed form at recorded time, so the true factor is exact.
 */
import { gaussian, seededRng } from '../helpers/rng.ts';

/** Linear gain for a level in dBFS where a full-scale sine peaks at 0 dBFS (AES17). */
export const sinePeak = (dbfs: number) => Math.pow(10, dbfs / 20);
/** RMS of a sine at `dbfs` (a full-scale sine has RMS 1/√2). */
export const rmsFor = (dbfs: number) => Math.pow(10, dbfs / 20) / Math.SQRT2;

/**
 * Pink noise (−3 dB/octave) by Paul Kellet's economy filter of white noise (common practice),
 * scaled to an RMS of `rms`.
 */
export function pinkNoise(n: number, seed: number, rms: number): Float64Array {
  const g = gaussian(seededRng(seed));
  const x = new Float64Array(n);
  let b0 = 0, b1 = 0, b2 = 0;
  for (let i = 0; i < n; i++) {
    const w = g();
    b0 = 0.99765 * b0 + w * 0.099046;
    b1 = 0.963 * b1 + w * 0.2965164;
    b2 = 0.57 * b2 + w * 1.0526913;
    x[i] = b0 + b1 + b2 + w * 0.1848;
  }
  let s = 0;
  for (const v of x) s += v * v;
  const k = rms / Math.sqrt(s / n);
  for (let i = 0; i < n; i++) x[i]! *= k;
  return x;
}

/** Recorded time as a function of played time for a speed curve F(t) = f0 + slope·t (linear ramp). */
export const rampRecordedTime = (f0: number, slopePerSecond: number) => (t: number) => f0 * t + 0.5 * slopePerSecond * t * t;

/**
 * Mains hum with harmonics, as recorded (sin(2π·h·mains·t_r + h)), evaluated at recorded time
 * t_r = recordedTime(t) for played time t = i/fs. Levels: fundamental at `dbfs` (sine peak), then
 * relative amplitudes `rel`.
 */
export function hum(
  n: number,
  fs: number,
  mainsHz: number,
  dbfs: number,
  recordedTime: (t: number) => number,
  rel: readonly number[] = [1, 0.5, 0.35, 0.2, 0.15, 0.1],
): Float64Array {
  const a = sinePeak(dbfs);
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const ph = 2 * Math.PI * mainsHz * recordedTime(i / fs);
    let v = 0;
    for (let h = 0; h < rel.length; h++) v += rel[h]! * Math.sin((h + 1) * ph + h);
    x[i] = a * v;
  }
  return x;
}

/** Equal-tempered frequency of MIDI note m at A4 = 440 Hz (ISO 16), shifted by `cents`. */
export const noteHz = (m: number, cents = 0) => 440 * Math.pow(2, (m - 69) / 12 + cents / 1200);

/**
 * A harmonic melody (8 partials, amplitude 1/h, short attack/release) of notes of `noteSeconds`
 * each, tuned `cents` off A = 440 Hz equal temperament, played at speed `factor` (so all pitches ×
 * factor and durations ÷ factor). Peak level about `dbfs`.
 */
export function melody(n: number, fs: number, opts: { cents: number; factor?: number; dbfs?: number; seed?: number; noteSeconds?: number }): Float64Array {
  const factor = opts.factor ?? 1;
  const rng = seededRng(opts.seed ?? 3);
  const noteSeconds = opts.noteSeconds ?? 0.4;
  const x = new Float64Array(n);
  const amp = sinePeak(opts.dbfs ?? -20) / 2.2;
  const scale = [0, 2, 4, 5, 7, 9, 11, 12];
  const durRec = n / fs * factor;
  for (let start = 0; start < durRec; start += noteSeconds) {
    const m = 55 + scale[Math.floor(rng() * scale.length)]! + 12 * Math.floor(rng() * 2);
    const f = noteHz(m, opts.cents) * factor;
    const i0 = Math.floor((start / factor) * fs), i1 = Math.min(n, Math.floor(((start + noteSeconds) / factor) * fs));
    const ph0 = rng() * 2 * Math.PI;
    for (let i = i0; i < i1; i++) {
      const t = (i - i0) / fs;
      const env = Math.min(1, t / 0.01) * Math.min(1, (i1 - i) / fs / 0.02);
      let v = 0;
      for (let h = 1; h <= 8; h++) {
        if (h * f > 0.45 * fs) break;
        v += Math.sin(2 * Math.PI * h * f * t + h * ph0) / h;
      }
      x[i]! += amp * env * v;
    }
  }
  return x;
}

export const add = (...xs: Float64Array[]) => {
  const y = new Float64Array(xs[0]!.length);
  for (const x of xs) for (let i = 0; i < y.length; i++) y[i]! += x[i]!;
  return y;
};

/** Scales x in place to an RMS of `rms`. */
export function normalizeRms(x: Float64Array, rms: number): Float64Array {
  let s = 0;
  for (const v of x) s += v * v;
  const k = rms / Math.sqrt(s / x.length);
  for (let i = 0; i < x.length; i++) x[i]! *= k;
  return x;
}

/**
 * "Programme": a harmonic melody with room noise 20 dB below it (pink), together at −20 dBFS RMS
 * (sine-referenced: RMS of a −20 dBFS sine), played at speed `factor`.
 */
export function programme(n: number, fs: number, factor: number, seed = 3, cents = 0): Float64Array {
  const m = melody(n, fs, { cents, factor, seed });
  normalizeRms(m, rmsFor(-20));
  const room = pinkNoise(n, seed + 100, rmsFor(-40));
  return normalizeRms(add(m, room), rmsFor(-20));
}

/**
 * A struck or held low note: `partials` harmonics at amplitude 1/h and phase h·phaseStep, a linear
 * attack over `attackSeconds`, then exponential decay with time constant τ, starting at
 * `startSeconds`.
 */
export function decayingNote(
  n: number,
  fs: number,
  f: number,
  amp: number,
  tauSeconds: number,
  { startSeconds = 0.1, attackSeconds = 0.005, partials = 10, phaseStep = 0.7 } = {},
): Float64Array {
  const x = new Float64Array(n);
  for (let i = Math.round(startSeconds * fs); i < n; i++) {
    const t = i / fs - startSeconds;
    const env = amp * Math.exp(-t / tauSeconds) * Math.min(1, t / attackSeconds);
    let v = 0;
    for (let h = 1; h <= partials; h++) v += Math.sin(2 * Math.PI * h * f * t + phaseStep * h) / h;
    x[i]! += env * v;
  }
  return x;
}
