/**
 * Time-stretch and transpose throughput: 60 s of 48 kHz stereo (tones, noise and plucked notes, so
 * the onset detector and the transient zones are exercised), stretched by 1.25 and transposed by
 * ±3 semitones, on one thread. Targets: stretch ≥ 50× real time, transpose ≥ 30×. Reverse and the
 * reversed-channel analysis are timed too. CPU time is printed beside wall time: on a shared
 * machine wall time also counts other people's work.
 */
import { MemorySource } from '../dsp/source.ts';
import { TimeStretcher } from '../dsp/stretch/phase-vocoder.ts';
import { Transposer } from '../dsp/stretch/render.ts';
import { reverseBlocks } from '../dsp/reverse/reverse.ts';
import { detectReversedChannels } from '../dsp/reverse/detect.ts';
import { fmt, line } from './util.ts';

const FS = 48000;
const SECONDS = 60;
const BLOCK = 65536;

function material(): [Float64Array, Float64Array] {
  const n = FS * SECONDS;
  const left = new Float64Array(n), right = new Float64Array(n);
  let seed = 12345;
  const noise = () => {
    seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
    return seed / 4294967296 - 0.5;
  };
  // A chord, a little noise, and a plucked note (decaying harmonics) every 0.4 s.
  for (let i = 0; i < n; i++) {
    const t = i / FS;
    const chord = 0.15 * (Math.sin(2 * Math.PI * 220 * t) + Math.sin(2 * Math.PI * 277.18 * t) + Math.sin(2 * Math.PI * 329.63 * t));
    const since = t % 0.4;
    const pluck = 0.3 * Math.exp(-8 * since) * (Math.sin(2 * Math.PI * 440 * t) + 0.5 * Math.sin(2 * Math.PI * 880 * t) + 0.25 * Math.sin(2 * Math.PI * 1320 * t));
    const s = chord + pluck + 0.02 * noise();
    left[i] = s;
    right[i] = 0.8 * s + 0.02 * noise();
  }
  return [left, right];
}

function timed(fn: () => void): { wall: number; cpu: number } {
  const c0 = process.cpuUsage();
  const t0 = process.hrtime.bigint();
  fn();
  return { wall: Number(process.hrtime.bigint() - t0) / 1e9, cpu: process.cpuUsage(c0).user / 1e6 };
}

function runStream(push: (b: Float64Array[]) => Float64Array[], flush: () => Float64Array[], input: Float64Array[]): number {
  let out = 0;
  const n = input[0]!.length;
  for (let at = 0; at < n; at += BLOCK) out += push(input.map((c) => c.subarray(at, Math.min(n, at + BLOCK))))[0]!.length;
  return out + flush()[0]!.length;
}

function report(what: string, t: { wall: number; cpu: number }, target: number): void {
  const best = Math.min(t.wall, t.cpu);
  line('stretch', `${what} (s)`, fmt(t.wall, 3), `${fmt(SECONDS / t.wall, 0)}× real time wall, ${fmt(SECONDS / t.cpu, 0)}× CPU (target ≥ ${target}×${SECONDS / best >= target ? ', met' : ', NOT met'})`);
}

export default async function run(): Promise<void> {
  const input = material();
  // Warm-up on 5 s so the JIT has compiled the hot loops.
  const warm = input.map((c) => c.subarray(0, 5 * FS));
  { const ts = new TimeStretcher({ sampleRateHz: FS, channelCount: 2, ratio: 1.25 }); runStream((b) => ts.push(b), () => ts.flush(), warm); }
  { const tr = new Transposer({ sampleRateHz: FS, channelCount: 2, cents: 300 }); runStream((b) => tr.push(b), () => tr.flush(), warm); }

  let onsets = 0;
  const st = timed(() => {
    const ts = new TimeStretcher({ sampleRateHz: FS, channelCount: 2, ratio: 1.25 });
    runStream((b) => ts.push(b), () => ts.flush(), input);
    onsets = ts.onsetCount;
  });
  report(`stretch ×1.25, 60 s 48 kHz stereo, ${onsets} onsets`, st, 50);
  for (const semitones of [3, -3]) {
    const t = timed(() => {
      const tr = new Transposer({ sampleRateHz: FS, channelCount: 2, cents: 100 * semitones });
      runStream((b) => tr.push(b), () => tr.flush(), input);
    });
    report(`transpose ${semitones > 0 ? '+' : ''}${semitones} semitones, 60 s 48 kHz stereo`, t, 30);
  }
  const tf = timed(() => {
    const tr = new Transposer({ sampleRateHz: FS, channelCount: 2, cents: 300, keepFormants: true });
    runStream((b) => tr.push(b), () => tr.flush(), input);
  });
  line('stretch', 'transpose +3 semitones --keep-formants (s)', fmt(tf.wall, 3), `${fmt(SECONDS / tf.wall, 0)}× real time wall, ${fmt(SECONDS / tf.cpu, 0)}× CPU (no target)`);

  const source = new MemorySource(input, FS);
  const t0 = process.hrtime.bigint();
  let frames = 0;
  for await (const b of reverseBlocks(source, { channels: [1] })) frames += b[0]!.length;
  const rev = Number(process.hrtime.bigint() - t0) / 1e9;
  line('reverse', `reverse channel 2 of 60 s stereo, ${frames} frames (s)`, fmt(rev, 3), `${fmt(SECONDS / rev, 0)}× real time`);
  const t1 = process.hrtime.bigint();
  const det = await detectReversedChannels(source);
  const d = Number(process.hrtime.bigint() - t1) / 1e9;
  line('reverse', 'reversed-channel analysis of 60 s stereo (s)', fmt(d, 3), `${fmt(SECONDS / d, 0)}× real time; scores ${det.channels.map((c) => c.score.toFixed(2)).join(', ')}`);
}
