/**
 * Test recordings for the browser tests (not the demo): a short stereo voice-like signal with a
 * 1 kHz tone at the head, 60 Hz hum and one reflection, and a 1-hour 96 kHz stereo file written
 * in pieces for the long-recording test and the editor bench.
 */
import fs from 'node:fs';
import { seededRng } from '../helpers/rng.ts';

export interface TestSignal {
  sampleRateHz: number;
  channels: Float64Array[];
  echo: { delaySeconds: number; gain: number };
}

/** Voice-like test signal: pitch-gliding pulse train through two formant resonances, in syllables. */
export function voiceLike(seconds: number, sampleRateHz: number, seed = 7): TestSignal {
  const rng = seededRng(seed);
  const n = Math.round(seconds * sampleRateHz);
  const dry = new Float64Array(n);
  let phase = 0;
  const res = [[700, 0.97], [1200, 0.975]] as const;
  const st = res.map(() => [0, 0]);
  for (let i = 0; i < n; i++) {
    const t = i / sampleRateHz;
    if (t < 1) { dry[i] = 0.25 * Math.sin(2 * Math.PI * 1000 * t); continue; }
    const f0 = 120 + 25 * Math.sin(2 * Math.PI * 0.7 * t);
    phase += f0 / sampleRateHz;
    let x = 0;
    if (phase >= 1) { phase -= 1; x = 1; }
    x += 0.02 * (rng() - 0.5);
    let y = 0;
    res.forEach(([f, r], k) => {
      const s = st[k]!;
      const v = x + 2 * r * Math.cos((2 * Math.PI * f) / sampleRateHz) * s[0]! - r * r * s[1]!;
      s[1] = s[0]!; s[0] = v; y += v;
    });
    const syllable = Math.max(0, Math.sin(Math.PI * ((t - 1) * 3.1 % 1)));
    dry[i] = 0.02 * y * syllable;
  }
  const echo = { delaySeconds: 0.0375, gain: 0.45 };
  const d = Math.round(echo.delaySeconds * sampleRateHz);
  const left = new Float64Array(n), right = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const hum = 0.01 * Math.sin((2 * Math.PI * 60 * i) / sampleRateHz);
    const v = dry[i]! + (i >= d ? echo.gain * dry[i - d]! : 0) + hum;
    left[i] = v;
    right[i] = 0.9 * v;
  }
  return { sampleRateHz, channels: [left, right], echo };
}

/** A plain 24-bit PCM WAV (RIFF, fmt, data) — written here, independently of the editor's writer. */
export function wav24(sig: { sampleRateHz: number; channels: Float64Array[] }): Buffer {
  const ch = sig.channels.length, n = sig.channels[0]!.length;
  const data = Buffer.alloc(n * ch * 3);
  for (let i = 0, p = 0; i < n; i++) {
    for (let c = 0; c < ch; c++, p += 3) {
      const q = Math.max(-8388608, Math.min(8388607, Math.round(sig.channels[c]![i]! * 8388608)));
      data.writeIntLE(q, p, 3);
    }
  }
  const h = Buffer.alloc(44);
  h.write('RIFF', 0); h.writeUInt32LE(36 + data.length, 4); h.write('WAVE', 8);
  h.write('fmt ', 12); h.writeUInt32LE(16, 16); h.writeUInt16LE(1, 20); h.writeUInt16LE(ch, 22);
  h.writeUInt32LE(sig.sampleRateHz, 24); h.writeUInt32LE(sig.sampleRateHz * ch * 3, 28); h.writeUInt16LE(ch * 3, 32); h.writeUInt16LE(24, 34);
  h.write('data', 36); h.writeUInt32LE(data.length, 40);
  return Buffer.concat([h, data]);
}

/**
 * A long 16-bit stereo WAV written one second at a time (never whole in memory): a 440 Hz tone
 * whose level follows a slow ramp, so the overview has a shape to check.
 */
export function writeLongWav(path: string, seconds: number, sampleRateHz: number): number {
  const ch = 2, bytesPerSecond = sampleRateHz * ch * 2;
  const fd = fs.openSync(path, 'w');
  const h = Buffer.alloc(44);
  const dataBytes = seconds * bytesPerSecond;
  h.write('RIFF', 0); h.writeUInt32LE(36 + dataBytes, 4); h.write('WAVE', 8);
  h.write('fmt ', 12); h.writeUInt32LE(16, 16); h.writeUInt16LE(1, 20); h.writeUInt16LE(ch, 22);
  h.writeUInt32LE(sampleRateHz, 24); h.writeUInt32LE(bytesPerSecond, 28); h.writeUInt16LE(ch * 2, 32); h.writeUInt16LE(16, 34);
  h.write('data', 36); h.writeUInt32LE(dataBytes, 40);
  fs.writeSync(fd, h);
  const base = new Int16Array(sampleRateHz * ch);
  for (let i = 0; i < sampleRateHz; i++) {
    const v = Math.sin((2 * Math.PI * 440 * i) / sampleRateHz);
    base[2 * i] = Math.round(v * 32767); base[2 * i + 1] = Math.round(v * 32767);
  }
  const sec = new Int16Array(base.length);
  const levels = 60;
  const cache = new Map<number, Buffer>();
  for (let s = 0; s < seconds; s++) {
    const level = Math.round(((s % 600) / 600) * levels) / levels * 0.9 + 0.05;
    let buf = cache.get(level);
    if (!buf) {
      for (let i = 0; i < base.length; i++) sec[i] = Math.round(base[i]! * level);
      buf = Buffer.from(sec.buffer.slice(0));
      cache.set(level, buf);
    }
    fs.writeSync(fd, buf);
  }
  fs.closeSync(fd);
  return 44 + dataBytes;
}
