/**
 * Voice-like test material: a glottal source through a cascade formant filter.
 *
 *  - Source: Rosenberg's glottal pulse (Rosenberg 1971, "Effect of glottal pulse shape on the
 *    quality of natural vowels", JASA 49(2B):583–590), opening 40 % and closing 16 % of the period,
 *    differentiated for lip radiation; or, for exact spectral checks, a band-limited impulse train
 *    (a sum of equal cosines, flat spectrum).
 *  - Formants: second-order resonators in cascade, y[n] = A·x[n] + B·y[n−1] + C·y[n−2] with
 *    C = −e^{−2πb/fs}, B = 2e^{−πb/fs}·cos(2πF/fs), A = 1 − B − C (Klatt 1980, "Software for a
 *    cascade/parallel formant synthesizer", JASA 67(3):971–995, eq. 2), unity gain at DC.
 *  - Vowel formants: male averages of Peterson & Barney 1952 ("Control methods used in a study of
 *    the vowels", JASA 24(2):175–184, Table II).
 */
import { seededRng } from './rng.ts';

export interface Vowel {
  readonly name: string;
  /** F1, F2, F3 (Hz). */
  readonly formantsHz: readonly [number, number, number];
}

export const VOWELS: readonly Vowel[] = [
  { name: 'i', formantsHz: [270, 2290, 3010] },
  { name: 'ɛ', formantsHz: [530, 1840, 2480] },
  { name: 'æ', formantsHz: [660, 1720, 2410] },
  { name: 'ɑ', formantsHz: [730, 1090, 2440] },
  { name: 'u', formantsHz: [300, 870, 2240] },
];

/** Bandwidths used with the formants above (Hz). */
export const FORMANT_BANDWIDTHS_HZ: readonly [number, number, number] = [60, 90, 120];

export interface Resonator {
  a: number;
  b: number;
  c: number;
}

export function resonator(frequencyHz: number, bandwidthHz: number, sampleRateHz: number): Resonator {
  const c = -Math.exp((-2 * Math.PI * bandwidthHz) / sampleRateHz);
  const b = 2 * Math.exp((-Math.PI * bandwidthHz) / sampleRateHz) * Math.cos((2 * Math.PI * frequencyHz) / sampleRateHz);
  return { a: 1 - b - c, b, c };
}

/** |H(f)| of a cascade of resonators (exact frequency response of the difference equations). */
export function cascadeMagnitude(formantsHz: readonly number[], bandwidthsHz: readonly number[], sampleRateHz: number, frequencyHz: number): number {
  let mag = 1;
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
  for (let i = 0; i < formantsHz.length; i++) {
    const r = resonator(formantsHz[i]!, bandwidthsHz[i]!, sampleRateHz);
    // H = A / (1 − B e^{−jw} − C e^{−2jw})
    const re = 1 - r.b * Math.cos(w) - r.c * Math.cos(2 * w);
    const im = r.b * Math.sin(w) + r.c * Math.sin(2 * w);
    mag *= Math.abs(r.a) / Math.hypot(re, im);
  }
  return mag;
}

/** Filters x through the cascade in place, with formants that may change per sample. */
function cascade(x: Float64Array, formantsAt: (i: number) => readonly number[], bandwidthsHz: readonly number[], sampleRateHz: number, updateEvery = 64): void {
  const stages = bandwidthsHz.length;
  const y1 = new Float64Array(stages), y2 = new Float64Array(stages);
  let rs: Resonator[] = [];
  for (let i = 0; i < x.length; i++) {
    if (i % updateEvery === 0) {
      const f = formantsAt(i);
      rs = f.map((fr, k) => resonator(fr, bandwidthsHz[k]!, sampleRateHz));
    }
    let v = x[i]!;
    for (let k = 0; k < stages; k++) {
      const r = rs[k]!;
      const y = r.a * v + r.b * y1[k]! + r.c * y2[k]!;
      y2[k] = y1[k]!;
      y1[k] = y;
      v = y;
    }
    x[i] = v;
  }
}

/** A steady vowel on a flat-spectrum band-limited impulse train at f0 (for exact envelope checks). */
export function steadyVowel(vowel: Vowel, f0Hz: number, sampleRateHz: number, durationSeconds: number, amplitude = 0.3): Float64Array {
  const n = Math.round(durationSeconds * sampleRateHz);
  const x = new Float64Array(n);
  const harmonics = Math.floor((0.45 * sampleRateHz) / f0Hz);
  for (let h = 1; h <= harmonics; h++) {
    const w = (2 * Math.PI * h * f0Hz) / sampleRateHz;
    for (let i = 0; i < n; i++) x[i]! += Math.cos(w * i);
  }
  cascade(x, () => vowel.formantsHz, FORMANT_BANDWIDTHS_HZ, sampleRateHz);
  let peak = 0;
  for (let i = n >> 2; i < n; i++) peak = Math.max(peak, Math.abs(x[i]!));
  for (let i = 0; i < n; i++) x[i]! *= amplitude / peak;
  return x;
}

/**
 * Connected "speech": syllables of a changing vowel with an f0 contour (declining 140→100 Hz with
 * a rise on each syllable and slight jitter), a quick attack (8–20 ms, some with a plosive noise
 * burst) and a slower release (60–140 ms), separated by short pauses.
 */
export function rosenbergVoice(sampleRateHz: number, durationSeconds: number, seed = 3, amplitude = 0.4): Float64Array {
  const fs = sampleRateHz;
  const n = Math.round(durationSeconds * fs);
  const rng = seededRng(seed);
  const env = new Float64Array(n);
  const vowelAt = new Int32Array(n);
  const burst = new Float64Array(n);
  let t = Math.round(0.08 * fs);
  let syll = 0;
  while (t < n - 0.25 * fs) {
    const attack = Math.round((0.008 + 0.012 * rng()) * fs);
    const hold = Math.round((0.09 + 0.12 * rng()) * fs);
    const release = Math.round((0.06 + 0.08 * rng()) * fs);
    const level = 0.6 + 0.4 * rng();
    const v = Math.floor(rng() * VOWELS.length);
    for (let i = 0; i < attack + hold + release && t + i < n; i++) {
      let e: number;
      if (i < attack) e = 0.5 - 0.5 * Math.cos((Math.PI * i) / attack);
      else if (i < attack + hold) e = 1 - (0.25 * (i - attack)) / hold;
      else e = 0.75 * Math.exp((-5 * (i - attack - hold)) / release);
      env[t + i] = level * e;
      vowelAt[t + i] = v;
    }
    if (syll % 2 === 0) {
      // Plosive release: 6 ms of decaying noise just before the voicing.
      const len = Math.round(0.006 * fs);
      for (let i = 0; i < len && t + i < n; i++) burst[t + i] = 0.3 * level * (rng() * 2 - 1) * Math.exp((-4 * i) / len);
    }
    t += attack + hold + release + Math.round((0.04 + 0.1 * rng()) * fs);
    syll++;
  }
  // Source: differentiated Rosenberg pulses with a declining, jittered f0.
  const src = new Float64Array(n);
  let phase = 0;
  let prev = 0;
  for (let i = 0; i < n; i++) {
    const u = i / n;
    const f0 = (140 - 40 * u) * (1 + 0.05 * Math.sin(2 * Math.PI * 3.1 * (i / fs))) * (1 + 0.004 * (rng() - 0.5));
    phase += f0 / fs;
    phase -= Math.floor(phase);
    const t1 = 0.4, t2 = 0.16;
    let g = 0;
    if (phase < t1) g = 0.5 * (1 - Math.cos((Math.PI * phase) / t1));
    else if (phase < t1 + t2) g = Math.cos((Math.PI * (phase - t1)) / (2 * t2));
    src[i] = (g - prev) * env[i]!;
    prev = g;
  }
  cascade(src, (i) => VOWELS[vowelAt[i]!]!.formantsHz, FORMANT_BANDWIDTHS_HZ, fs);
  for (let i = 0; i < n; i++) src[i]! += burst[i]!;
  let peak = 0;
  for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(src[i]!));
  for (let i = 0; i < n; i++) src[i]! *= amplitude / peak;
  return src;
}

export interface IntonedVoiceOptions {
  /** Multiplies the whole f0 contour (a transposition of the source; default 1). */
  readonly pitchFactor?: number;
  /** Multiplies every formant frequency (default 1). */
  readonly formantScale?: number;
  /** Telephone-like band: 4th-order high-pass at 300 Hz and low-pass at 3400 Hz. */
  readonly telephone?: boolean;
}

/**
 * Intoned "speech" for envelope checks: 0.25 s syllables (raised-cosine level) cycling through
 * the five vowels, on a band-limited harmonic source with a −6 dB/octave spectrum (harmonic h at
 * 1/h) whose f0 follows a slow contour between 0.70 and 1.40 × `f0Hz`,
 * through the Klatt cascade. With `pitchFactor` the same material is made at f0·factor with the
 * same filter: a perfect transposition that keeps the envelope.
 */
export function intonedVoice(sampleRateHz: number, durationSeconds: number, f0Hz: number, options: IntonedVoiceOptions = {}): Float64Array {
  const fs = sampleRateHz, n = Math.round(durationSeconds * fs);
  const pitch = options.pitchFactor ?? 1, scale = options.formantScale ?? 1;
  const x = new Float64Array(n);
  const syllable = Math.round(0.25 * fs);
  let phase = 0;
  for (let i = 0; i < n; i++) {
    const t = i / fs;
    const f0 = pitch * f0Hz * (1.05 + 0.3 * Math.sin(2 * Math.PI * 0.37 * t) * Math.cos(2 * Math.PI * 0.11 * t) + 0.05 * Math.sin(2 * Math.PI * 2.3 * t));
    phase += f0 / fs;
    phase -= Math.floor(phase);
    let s = 0;
    for (let h = 1; h * f0 < 0.45 * fs; h++) s += Math.cos(2 * Math.PI * h * phase) / h;
    x[i] = s * (0.5 - 0.5 * Math.cos((2 * Math.PI * (i % syllable)) / syllable));
  }
  // One vowel per syllable, its formants scaled, through the same resonator cascade.
  cascade(x, (i) => VOWELS[(3 * Math.floor(i / syllable)) % VOWELS.length]!.formantsHz.map((f) => f * scale), FORMANT_BANDWIDTHS_HZ, fs, syllable);
  if (options.telephone) {
    for (const [type, f] of [['hp', 300], ['hp', 300], ['lp', 3400], ['lp', 3400]] as const) biquadInPlace(x, type, f, fs);
  }
  let peak = 0;
  for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(x[i]!));
  for (let i = 0; i < n; i++) x[i]! *= 0.4 / peak;
  return x;
}

/**
 * Second-order Butterworth (Q = 1/√2) high- or low-pass in place (R. Bristow-Johnson, "Cookbook
 * formulae for audio EQ biquad filter coefficients": HPF b = ((1+cos w)/2, −(1+cos w), (1+cos w)/2),
 * LPF b = ((1−cos w)/2, 1−cos w, (1−cos w)/2), a = (1+α, −2 cos w, 1−α), α = sin w/(2Q)).
 */
function biquadInPlace(x: Float64Array, type: 'hp' | 'lp', frequencyHz: number, sampleRateHz: number): void {
  const w = (2 * Math.PI * frequencyHz) / sampleRateHz, c = Math.cos(w), alpha = Math.sin(w) / Math.SQRT2;
  const b0 = type === 'hp' ? (1 + c) / 2 : (1 - c) / 2, b1 = type === 'hp' ? -(1 + c) : 1 - c, b2 = b0;
  const a0 = 1 + alpha, a1 = -2 * c, a2 = 1 - alpha;
  let x1 = 0, x2 = 0, z1 = 0, z2 = 0;
  for (let i = 0; i < x.length; i++) {
    const v = x[i]!;
    const y = (b0 * v + b1 * x1 + b2 * x2 - a1 * z1 - a2 * z2) / a0;
    x2 = x1;
    x1 = v;
    z2 = z1;
    z1 = y;
    x[i] = y;
  }
}
