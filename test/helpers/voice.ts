/**
 * Synthetic voice-like test material: a glottal pulse train with a moving pitch, shaped by four
 * moving formant resonators, grouped into syllables and phrases separated by pauses, with some
 * unvoiced (noise) consonants, plus white noise at a fixed level below the voice. Everything is
 * seeded, so a (sampleRateHz, seconds, seed) triple always gives the same samples.
 *
 * Method (common practice in speech synthesis, e.g. the Klatt cascade formant synthesiser:
 * D. H. Klatt, "Software for a cascade/parallel formant synthesizer", JASA 67(3), 1980): a
 * band-limited impulse train at f0, a one-pole glottal roll-off, and two-pole resonators
 * y[n] = A·x[n] + B·y[n−1] + C·y[n−2] with C = −e^{−2πBW/fs}, B = 2e^{−πBW/fs}cos(2πF/fs),
 * A = 1 − B − C (unity gain at DC; `resonator` in voice-like.ts). Formant values are typical adult vowel ranges (from memory).
 *
 * This is test material, not a speech model: it has the properties the analyses care about
 * (harmonic spectrum with a moving pitch, moving spectral envelope, silences, loud and quiet
 * passages, a broadband noise floor) and nothing else.
 */
import { gaussian, seededRng } from './rng.ts';
import { resonator } from './voice-like.ts';

export interface VoiceOptions {
  sampleRateHz: number;
  seconds: number;
  seed: number;
  /** White-noise level relative to the voice's RMS over the whole clip, dB (default −40). */
  noiseDb?: number;
  /** Peak level of the voice part in dBFS (default −8). */
  peakDbfs?: number;
  /** Fraction of syllables that are unvoiced consonant + vowel (default 0.3). */
  fricativeFraction?: number;
}

export interface VoiceSignal {
  /** Voice + noise: the "dry" source. */
  x: Float64Array;
  /** The voice part alone. */
  voice: Float64Array;
  /** The noise part alone. */
  noise: Float64Array;
  /** [start, end) sample ranges of the phrases (loud passages), in order. */
  phrases: Array<[number, number]>;
}

/** Typical vowel formant targets (F1–F4 in Hz), adult voice; from memory, for test material only. */
const VOWELS: ReadonlyArray<readonly [number, number, number, number]> = [
  [730, 1090, 2440, 3400], // "a"
  [530, 1840, 2480, 3500], // "e"
  [270, 2290, 3010, 3700], // "i"
  [570, 840, 2410, 3300], // "o"
  [300, 870, 2240, 3300], // "u"
  [660, 1720, 2410, 3400], // "ae"
  [490, 1350, 1690, 3300], // "er"
];
const BANDWIDTHS = [80, 100, 140, 200] as const;

interface Syllable {
  start: number;
  voicedStart: number;
  end: number;
  vowel: readonly [number, number, number, number];
  nextVowel: readonly [number, number, number, number];
  /** Formant bandwidth scale for this syllable. */
  bwScale: number;
  f0Start: number;
  f0End: number;
  amp: number;
  fricative: boolean;
}

/** Generates the material. Cost is a few operations per sample (fine for minutes of audio). */
export function voiceLike(options: VoiceOptions): VoiceSignal {
  const fs = options.sampleRateHz;
  const n = Math.round(options.seconds * fs);
  const rng = seededRng(options.seed);
  const normal = gaussian(seededRng(options.seed ^ 0x5bd1e995));
  const uni = (a: number, b: number) => a + (b - a) * rng();
  const pick = <T>(xs: readonly T[]): T => xs[Math.min(xs.length - 1, Math.floor(rng() * xs.length))]!;
  // Each syllable's formants vary around the vowel's (±15 %: speakers and context differ), so the
  // long-term spectrum is smooth as it is for real speech.
  const jitter = (v: readonly [number, number, number, number]) =>
    v.map((f) => f * uni(0.85, 1.15)) as unknown as readonly [number, number, number, number];

  // --- Timeline: phrases of syllables, separated by pauses.
  const syllables: Syllable[] = [];
  const phrases: Array<[number, number]> = [];
  let t = Math.round(uni(0.08, 0.25) * fs);
  while (t < n) {
    const phraseSyllables = 3 + Math.floor(rng() * 9);
    const phraseAmp = Math.pow(10, uni(-9, 0) / 20);
    const f0Base = uni(95, 210);
    const declination = uni(0.75, 0.95);
    const phraseStart = t;
    for (let s = 0; s < phraseSyllables && t < n; s++) {
      const fricative = rng() < (options.fricativeFraction ?? 0.3);
      const fricLen = fricative ? Math.round(uni(0.05, 0.12) * fs) : 0;
      const len = Math.round(uni(0.12, 0.34) * fs);
      const progress0 = s / phraseSyllables, progress1 = (s + 1) / phraseSyllables;
      const accent = rng() < 0.3 ? uni(1.05, 1.25) : 1;
      syllables.push({
        start: t,
        voicedStart: t + fricLen,
        end: t + fricLen + len,
        vowel: jitter(pick(VOWELS)),
        nextVowel: jitter(pick(VOWELS)),
        f0Start: f0Base * accent * (1 - (1 - declination) * progress0) * uni(0.95, 1.05),
        f0End: f0Base * (1 - (1 - declination) * progress1) * uni(0.9, 1.1),
        amp: phraseAmp * uni(0.6, 1),
        bwScale: uni(0.7, 1.6),
        fricative,
      });
      t += fricLen + len + Math.round((rng() < 0.5 ? uni(0, 0.06) : uni(0.06, 0.14)) * fs);
    }
    phrases.push([phraseStart, Math.min(n, t)]);
    t += Math.round(uni(0.25, 0.9) * fs);
  }

  // --- Synthesis.
  const voice = new Float64Array(n);
  const half = 8; // band-limited pulse: Hann-windowed sinc, 16 taps, cutoff 0.45·fs
  const cutoff = 0.9; // of Nyquist
  const pulse = new Float64Array(n + 2 * half + 2);
  const fricNoise = new Float64Array(n);
  for (const syl of syllables) {
    // Unvoiced consonant: noise burst through one high resonance.
    if (syl.fricative) {
      const fc = uni(3000, Math.min(6500, 0.4 * fs));
      const bw = uni(800, 1600);
      const { a, b, c } = resonator(fc, bw, fs);
      let y1 = 0, y2 = 0;
      const len = syl.voicedStart - syl.start;
      for (let i = 0; i < len && syl.start + i < n; i++) {
        const env = Math.sin((Math.PI * (i + 0.5)) / len) ** 2;
        const y = a * normal() + b * y1 + c * y2;
        y2 = y1;
        y1 = y;
        fricNoise[syl.start + i] = syl.amp * env * y;
      }
    }
    // Voiced part: pulses at a gliding f0 with slight jitter.
    let phase = 0;
    const len = syl.end - syl.voicedStart;
    for (let i = 0; i < len; i++) {
      const u = i / len;
      const f0 = (syl.f0Start + (syl.f0End - syl.f0Start) * u) * (1 + 0.004 * Math.sin(2 * Math.PI * 5.3 * (i / fs)));
      const prev = phase;
      phase += f0 / fs;
      if (Math.floor(phase) > Math.floor(prev)) {
        // Fractional position of the pulse inside this sample step.
        const frac = (Math.floor(phase) - prev) / (phase - prev);
        const at = syl.voicedStart + i - 1 + frac;
        const env = Math.min(1, u / 0.12, (1 - u) / 0.15);
        const amp = syl.amp * Math.max(0, env) * (1 + 0.03 * normal());
        const c0 = Math.floor(at);
        for (let k = -half + 1; k <= half; k++) {
          const idx = c0 + k;
          if (idx < 0 || idx >= n) continue;
          const d = idx - at;
          const w = 0.5 + 0.5 * Math.cos((Math.PI * d) / half);
          const s = d === 0 ? 1 : Math.sin(Math.PI * cutoff * d) / (Math.PI * cutoff * d);
          pulse[idx]! += amp * cutoff * s * w;
        }
      }
    }
  }

  // Glottal roll-off (one pole at ~150 Hz), then the formant cascade with targets gliding
  // from each syllable's vowel towards the next one. Coefficients update every 32 samples.
  const pole = Math.exp((-2 * Math.PI * 150) / fs);
  const state = new Float64Array(8);
  const coef = new Float64Array(12);
  let g = 0;
  let si = 0;
  const setCoefficients = (formants: readonly number[], bwScale: number) => {
    for (let f = 0; f < 4; f++) {
      const fc = Math.min(formants[f]!, 0.45 * fs);
      const r = resonator(fc, BANDWIDTHS[f]! * bwScale, fs);
      coef[3 * f] = r.a;
      coef[3 * f + 1] = r.b;
      coef[3 * f + 2] = r.c;
    }
  };
  const formants = [500, 1500, 2500, 3500];
  setCoefficients(formants, 1);
  for (let i = 0; i < n; i++) {
    if ((i & 31) === 0) {
      while (si < syllables.length - 1 && syllables[si]!.end <= i) si++;
      const syl = syllables[si];
      if (syl && i >= syl.start) {
        const u = Math.min(1, Math.max(0, (i - syl.voicedStart) / Math.max(1, syl.end - syl.voicedStart)));
        const glide = u < 0.6 ? 0 : (u - 0.6) / 0.4; // hold, then glide towards the next vowel
        for (let f = 0; f < 4; f++) formants[f] = syl.vowel[f]! + (syl.nextVowel[f]! - syl.vowel[f]!) * 0.5 * glide;
        setCoefficients(formants, syl.bwScale);
      }
    }
    g = (1 - pole) * pulse[i]! + pole * g;
    let v = g;
    for (let f = 0; f < 4; f++) {
      const a = coef[3 * f]!, b = coef[3 * f + 1]!, c = coef[3 * f + 2]!;
      const y = a * v + b * state[2 * f]! + c * state[2 * f + 1]!;
      state[2 * f + 1] = state[2 * f]!;
      state[2 * f] = y;
      v = y;
    }
    // A little of the glottal source bypasses the formants, so the voice keeps some energy above F4.
    voice[i] = v + 0.03 * g;
  }
  // Radiation at the lips: first difference (+6 dB/octave).
  for (let i = n - 1; i > 0; i--) voice[i] = voice[i]! - voice[i - 1]!;
  voice[0] = 0;
  // Unvoiced consonants 12 dB below the voiced sound (RMS over the segments where each sounds).
  let vs = 0, vn = 0, fsq = 0, fn = 0;
  for (let i = 0; i < n; i++) {
    if (voice[i] !== 0) {
      vs += voice[i]! ** 2;
      vn++;
    }
    if (fricNoise[i] !== 0) {
      fsq += fricNoise[i]! ** 2;
      fn++;
    }
  }
  const fricScale = fsq > 0 && vs > 0 ? Math.sqrt(vs / vn / (fsq / fn)) * Math.pow(10, -12 / 20) : 0;
  for (let i = 0; i < n; i++) voice[i] = voice[i]! + fricScale * fricNoise[i]!;

  // Levels.
  let peak = 0;
  for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(voice[i]!));
  const peakTarget = Math.pow(10, (options.peakDbfs ?? -8) / 20);
  const scale = peak > 0 ? peakTarget / peak : 0;
  let sumSq = 0;
  for (let i = 0; i < n; i++) {
    voice[i] = voice[i]! * scale;
    sumSq += voice[i]! ** 2;
  }
  const voiceRms = Math.sqrt(sumSq / Math.max(1, n));
  const noiseRms = voiceRms * Math.pow(10, (options.noiseDb ?? -40) / 20);
  const noise = new Float64Array(n);
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    noise[i] = noiseRms * normal();
    x[i] = voice[i]! + noise[i]!;
  }
  return { x, voice, noise, phrases };
}
