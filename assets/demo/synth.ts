/**
 * The bundled demo recording — INVENTED DATA for the demo only.
 *
 * Scenario (fictional): "Thornbury Mill oral history, reel 7" — a 1961 interview with the
 * (invented) weaver Ada Pennick, recorded on a mains-powered portable recorder in a small office
 * with a hard desk, and transferred on a deck whose capstan ran fast. The reel starts with the
 * recordist's 1 kHz line-up tone.
 *
 * What the file carries (the "true parameters" written beside it):
 *  - speed: played at `speedFactor` × the recorded speed — every frequency is ×factor, every
 *    duration ÷factor;
 *  - 60 Hz mains hum (and harmonics) recorded with the programme, so it appears at 60 × factor;
 *  - the 1 kHz line-up tone at the head, appearing at 1000 × factor;
 *  - one reflection from the desk: y = x + g·x(t − τ) on the voice (harmonics and breath noise),
 *    τ measured in the file;
 *  - a small inter-channel delay (head azimuth), channel 2 lagging;
 *  - tape hiss, added at playback (so not speed-scaled).
 *
 * Everything is additive synthesis evaluated in closed form at recorded time t_r = factor · t, so
 * speed, reflection delay and azimuth delay are exact, with no resampling involved.
 * Pure TypeScript (no Node APIs) so tests can regenerate the clean source.
 */
import { seededRng } from '../../dsp/random.ts';

export interface DemoParameters {
  description: string;
  invented: true;
  sampleRateHz: number;
  channels: number;
  durationSeconds: number;
  /** Played speed ÷ recorded speed. */
  speedFactor: number;
  mainsHz: number;
  /** Hum fundamental as it appears in the file (mainsHz × speedFactor). */
  humInFileHz: number;
  toneHz: number;
  toneInFileHz: number;
  /** Where the tone sits in the file. */
  toneStartSeconds: number;
  toneEndSeconds: number;
  toneLevelDbfs: number;
  echo: { delaySeconds: number; gain: number; delayRecordedSeconds: number };
  /** Channel 2 lags channel 1 by this much (positive = channel 2 later). */
  interChannelDelaySeconds: number;
  humLevelDbfs: number;
  hissLevelDbfs: number;
  reversedChannels: number[];
}

export const DEMO_NAME = 'thornbury-reel7';

export function demoParameters(): DemoParameters {
  const speedFactor = 1.0293;
  const delayRecordedSeconds = 0.0124;
  return {
    description:
      'INVENTED demo recording: "Thornbury Mill oral history, reel 7" (fictional interview with a fictional weaver, ' +
      'Ada Pennick, 1961). Synthetic voice-like programme with a 1 kHz line-up tone at the head, 60 Hz mains hum, ' +
      'one desk reflection, slight head azimuth error and tape hiss, transferred 2.93 % fast.',
    invented: true,
    sampleRateHz: 48000,
    channels: 2,
    durationSeconds: 24,
    speedFactor,
    mainsHz: 60,
    humInFileHz: 60 * speedFactor,
    toneHz: 1000,
    toneInFileHz: 1000 * speedFactor,
    toneStartSeconds: 0.5 / speedFactor,
    toneEndSeconds: 3.5 / speedFactor,
    toneLevelDbfs: -12,
    echo: { delaySeconds: delayRecordedSeconds / speedFactor, gain: 0.42, delayRecordedSeconds },
    interChannelDelaySeconds: 12e-6,
    humLevelDbfs: -52,
    hissLevelDbfs: -66,
    reversedChannels: [],
  };
}

const smoothstep = (x: number) => (x <= 0 ? 0 : x >= 1 ? 1 : x * x * (3 - 2 * x));

/** Speech-like phrases in recorded time: [start, end] seconds, with pauses between. */
const PHRASES: readonly [number, number][] = [
  [4.2, 6.9], [7.5, 9.6], [10.4, 13.8], [14.5, 16.2], [17.0, 20.1], [20.8, 23.6],
];

/** Syllable-rate amplitude envelope of the voice at recorded time t (0 in pauses). */
function voiceEnvelope(t: number): number {
  for (const [a, b] of PHRASES) {
    if (t >= a - 0.05 && t <= b + 0.08) {
      const edge = smoothstep((t - a) / 0.05) * smoothstep((b + 0.08 - t) / 0.08);
      const syll = 0.55 + 0.45 * Math.sin(2 * Math.PI * 4.3 * (t - a) - Math.PI / 2) ** 2;
      return edge * syll;
    }
  }
  return 0;
}

/** Integrated f0 (cycles) at recorded time t: f0 = 190 + 18 sin(2π·0.31 t) + 9 sin(2π·1.7 t + 1). */
function f0Phase(t: number): number {
  return 190 * t - (18 / (2 * Math.PI * 0.31)) * Math.cos(2 * Math.PI * 0.31 * t) - (9 / (2 * Math.PI * 1.7)) * Math.cos(2 * Math.PI * 1.7 * t + 1);
}
function f0(t: number): number {
  return 190 + 18 * Math.sin(2 * Math.PI * 0.31 * t) + 9 * Math.sin(2 * Math.PI * 1.7 * t + 1);
}

/** Moving formant centre frequencies (Hz) at recorded time t. */
const formants = new Float64Array(3);
function setFormants(t: number): void {
  formants[0] = 620 + 180 * Math.sin(2 * Math.PI * 2.1 * t);
  formants[1] = 1500 + 450 * Math.sin(2 * Math.PI * 1.3 * t + 0.7);
  formants[2] = 2600 + 200 * Math.sin(2 * Math.PI * 0.9 * t + 2);
}

/** Magnitude of the sum of the three formant resonances (set by setFormants) at frequency f. */
function formantGain(f: number): number {
  const a = (f - formants[0]!) / 55, b = (f - formants[1]!) / 70, c = (f - formants[2]!) / 100;
  return 1 / Math.sqrt(1 + a * a) + 0.6 / Math.sqrt(1 + b * b) + 0.35 / Math.sqrt(1 + c * c) + 0.02;
}

const HARMONICS = 24;
const SQRT_K = Float64Array.from({ length: HARMONICS + 1 }, (_, k) => Math.sqrt(k));

/**
 * Breath noise: a real voice is not only harmonics; air through the glottis adds a noise that
 * fills the spectrum between them. It is a discrete coloured noise in recorded time (a table at
 * BREATH_RATE_HZ: white Gaussian through a 2-pole high-pass at 300 Hz and a 1-pole low-pass at
 * 2.5 kHz), read at any instant by windowed-sinc interpolation, so it is a band-limited function
 * of continuous time like the rest of the voice and the reflection copies it exactly.
 */
const BREATH_RATE_HZ = 24000, BREATH_HALF = 8, BREATH_PHASES = 512;
let breathTable: Float64Array | null = null;
let sincTable: Float64Array | null = null;

function buildBreath(seconds: number): void {
  const n = Math.ceil(seconds * BREATH_RATE_HZ) + 2 * BREATH_HALF + 2;
  const rng = seededRng(7161);
  const table = new Float64Array(n);
  const hp = Math.exp((-2 * Math.PI * 300) / BREATH_RATE_HZ), lp = Math.exp((-2 * Math.PI * 2500) / BREATH_RATE_HZ);
  let h1 = 0, h2 = 0, xPrev = 0, x2Prev = 0, l = 0, sumSq = 0;
  for (let i = 0; i < n; i++) {
    // Box–Muller from the seeded uniform generator.
    const g = Math.sqrt(-2 * Math.log(1 - rng())) * Math.cos(2 * Math.PI * rng());
    // Two one-pole high-passes in cascade, then a one-pole low-pass.
    h1 = hp * (h1 + g - xPrev);
    xPrev = g;
    h2 = hp * (h2 + h1 - x2Prev);
    x2Prev = h1;
    l = (1 - lp) * h2 + lp * l;
    table[i] = l;
    sumSq += l * l;
  }
  const rms = Math.sqrt(sumSq / n);
  for (let i = 0; i < n; i++) table[i] = table[i]! / rms;
  breathTable = table;
  // Hann-windowed sinc at BREATH_PHASES + 1 fractional offsets, 2·BREATH_HALF taps each.
  const taps = 2 * BREATH_HALF;
  sincTable = new Float64Array((BREATH_PHASES + 1) * taps);
  for (let p = 0; p <= BREATH_PHASES; p++) {
    const frac = p / BREATH_PHASES;
    for (let k = 0; k < taps; k++) {
      const d = k - (BREATH_HALF - 1) - frac; // tap offset from the reading instant
      const w = 0.5 + 0.5 * Math.cos((Math.PI * d) / BREATH_HALF);
      sincTable[p * taps + k] = d === 0 ? 1 : (w * Math.sin(Math.PI * d)) / (Math.PI * d);
    }
  }
}

/** Unit-RMS breath noise at recorded time t ≥ 0. */
function breathAt(t: number): number {
  const table = breathTable!, sinc = sincTable!;
  const pos = t * BREATH_RATE_HZ + BREATH_HALF;
  const i0 = Math.floor(pos);
  if (i0 < BREATH_HALF - 1 || i0 + BREATH_HALF + 1 >= table.length) return 0;
  const phase = (pos - i0) * BREATH_PHASES;
  const p = Math.floor(phase), mu = phase - p;
  const taps = 2 * BREATH_HALF;
  const a = p * taps, b = Math.min(BREATH_PHASES, p + 1) * taps;
  const first = i0 - (BREATH_HALF - 1);
  let acc = 0;
  for (let k = 0; k < taps; k++) acc += table[first + k]! * (sinc[a + k]! + mu * (sinc[b + k]! - sinc[a + k]!));
  return acc;
}

/** Breath level: about 20 dB under the harmonic part (measured on the synthesised voice). */
const BREATH_LEVEL = 0.012;

/** The dry voice at recorded time t (additive, closed form; sin(kφ) by the Chebyshev recurrence). */
function voiceAt(t: number): number {
  const env = voiceEnvelope(t);
  if (env === 0) return 0;
  setFormants(t);
  const phase = 2 * Math.PI * f0Phase(t);
  const fund = f0(t);
  const c2 = 2 * Math.cos(phase);
  let sPrev = 0; // sin(0·φ)
  let sCur = Math.sin(phase); // sin(1·φ)
  let s = 0;
  for (let k = 1; k <= HARMONICS; k++) {
    const fk = k * fund;
    if (fk > 7000) break;
    s += (formantGain(fk) / SQRT_K[k]!) * sCur;
    const next = c2 * sCur - sPrev;
    sPrev = sCur;
    sCur = next;
  }
  // Breath, stronger in the open phase of each glottal cycle.
  const open = 0.6 + 0.4 * Math.cos(phase);
  return 0.16 * env * s + BREATH_LEVEL * env * open * breathAt(t);
}

export interface DemoOptions {
  /** Include the desk reflection (default true). False gives the clean source for "no echo" checks. */
  withReflection?: boolean;
  /** Include hum, tone and hiss (default true). */
  withNoise?: boolean;
  /**
   * Include the head azimuth error, channel 2 lagging (default true). False puts both channels at
   * the same instant: with `withReflection: false` that is what a perfect restoration returns.
   */
  withAzimuthError?: boolean;
}

/** Synthesises the demo as planar float64 channels in the file's (played) time. */
export function synthesizeDemo(options: DemoOptions = {}): { parameters: DemoParameters; channels: Float64Array[] } {
  const p = demoParameters();
  const withReflection = options.withReflection ?? true;
  const withNoise = options.withNoise ?? true;
  const withAzimuthError = options.withAzimuthError ?? true;
  const fs = p.sampleRateHz;
  const n = Math.round(p.durationSeconds * fs);
  const F = p.speedFactor;
  const hum = Math.pow(10, p.humLevelDbfs / 20);
  const tone = Math.pow(10, p.toneLevelDbfs / 20);
  const hissRms = Math.pow(10, p.hissLevelDbfs / 20);
  if (!breathTable) buildBreath(p.durationSeconds * F + 0.1);
  const channels: Float64Array[] = [];
  for (let c = 0; c < p.channels; c++) {
    const lag = c === 0 || !withAzimuthError ? 0 : p.interChannelDelaySeconds;
    const gainCh = c === 0 ? 1 : 0.94;
    const noise = seededRng(1961 + c);
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const t = i / fs - lag; // played time at this channel's head position
      const tr = F * t; // recorded time
      let v = voiceAt(tr);
      if (withReflection) v += p.echo.gain * voiceAt(tr - p.echo.delayRecordedSeconds);
      if (withNoise) {
        if (tr >= 0.5 && tr <= 3.5) {
          const ramp = smoothstep((tr - 0.5) / 0.02) * smoothstep((3.5 - tr) / 0.02);
          v += tone * ramp * Math.sin(2 * Math.PI * p.toneHz * tr);
        }
        const hp = 2 * Math.PI * p.mainsHz * tr;
        v += hum * (Math.sin(hp) + 0.5 * Math.sin(2 * hp + 0.4) + 0.35 * Math.sin(3 * hp + 1.1) + 0.15 * Math.sin(5 * hp + 2));
        // Tape hiss (played time, white): sum of two uniforms, scaled to the target RMS.
        v += hissRms * Math.sqrt(6) * (noise() + noise() - 1);
      }
      x[i] = gainCh * v;
    }
    channels.push(x);
  }
  return { parameters: p, channels };
}
