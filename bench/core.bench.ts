/**
 * FFT and STFT+ISTFT throughput beside numpy/scipy doing the same work.
 *
 * Ours and theirs run back to back, round after round (a persistent python3 process answers each
 * round), and the lines report medians over the rounds — of the times, and of the per-round ratios
 * — so that load from other work on the machine hits both sides alike. Wall-clock times; the CPU
 * time ratio is printed too, as it is steadier on a busy machine.
 */
import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { createInterface } from 'node:readline';
import FFT from 'fft.js';
import { FftPlan, setFftKernels } from '../dsp/core/fft.ts';
import { StftProcessor } from '../dsp/core/stft.ts';
import { fmt, line } from './util.ts';

const ROUNDS = 5;

const PY_SERVER = `
import json, sys, time
import numpy as np, scipy.fft as sf
from scipy.signal import ShortTimeFFT, windows
x = np.random.default_rng(1).standard_normal((1000, 4096))
fs, n = 96000, 60 * 96000
sig = np.sin(2 * np.pi * 1000 * np.arange(n) / fs) + 0.1 * np.sin(np.arange(n) * 1.7)
S = ShortTimeFFT(windows.hann(2048, sym=False), hop=512, fs=fs)
def timed(f):
    w, c = time.perf_counter(), time.process_time()
    r = f()
    return time.perf_counter() - w, time.process_time() - c, r
def loop():
    for r in x: np.fft.rfft(r)
def stft():
    Z = S.stft(sig)
    return S.istft(Z, k1=n)
loop(); sf.rfft(x, axis=1)
print(json.dumps({"ready": 1}), flush=True)
for cmd in sys.stdin:
    cmd = cmd.strip()
    if cmd == "fft":
        lw, lc, _ = timed(loop)
        bw, bc, _ = timed(lambda: sf.rfft(x, axis=1))
        print(json.dumps({"loop": 1000 / lw, "batch": 1000 / bw, "batchCpu": 1000 / bc}), flush=True)
    elif cmd == "stft":
        w, c, y = timed(stft)
        print(json.dumps({"seconds": w, "cpu": c, "err": float(np.max(np.abs(y - sig)))}), flush=True)
`;

/** python3 with numpy/scipy answering one line of JSON per command; null if unavailable. */
class PythonPeer {
  readonly #proc: ChildProcessWithoutNullStreams;
  readonly #lines: AsyncIterator<string>;

  private constructor(proc: ChildProcessWithoutNullStreams) {
    this.#proc = proc;
    this.#lines = createInterface({ input: proc.stdout })[Symbol.asyncIterator]();
  }

  static async start(): Promise<PythonPeer | null> {
    try {
      const proc = spawn('python3', ['-c', PY_SERVER], { stdio: ['pipe', 'pipe', 'pipe'] });
      proc.on('error', () => {});
      const peer = new PythonPeer(proc);
      const first = await peer.#next();
      return first?.ready ? peer : (peer.close(), null);
    } catch {
      return null;
    }
  }

  async #next(): Promise<Record<string, number> | null> {
    const r = await this.#lines.next();
    if (r.done) return null;
    try {
      return JSON.parse(r.value) as Record<string, number>;
    } catch {
      return null;
    }
  }

  async ask(cmd: string): Promise<Record<string, number> | null> {
    this.#proc.stdin.write(cmd + '\n');
    return this.#next();
  }

  close(): void {
    this.#proc.stdin.end();
  }
}

const median = (v: number[]): number => {
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
};

function timed(fn: () => void): { seconds: number; cpu: number } {
  const c0 = process.cpuUsage();
  const t0 = process.hrtime.bigint();
  fn();
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const c = process.cpuUsage(c0);
  return { seconds, cpu: (c.user + c.system) / 1e6 };
}

export default async function run(): Promise<void> {
  const py = await PythonPeer.start();
  try {
    await fftBench(py);
    await stftBench(py);
  } finally {
    py?.close();
  }
}

/** 4096-point real transforms per second. */
async function fftBench(py: PythonPeer | null): Promise<void> {
  const n = 4096, reps = 1000;
  const plan = new FftPlan(n);
  setFftKernels('js');
  const planJs = new FftPlan(n);
  setFftKernels('auto');
  const ref = new FFT(n) as unknown as { realTransform(out: Float64Array, data: Float64Array): void };
  const refOut = new Float64Array(2 * n);
  const x = Float64Array.from({ length: n }, (_, i) => Math.sin(i * 0.01) + ((i * 7919) % 13) / 13);
  const out = plan.createHalfSpectrum();
  const rate = (f: () => void) => {
    for (let r = 0; r < 200; r++) f(); // warm-up
    return reps / timed(() => {
      for (let r = 0; r < reps; r++) f();
    }).seconds;
  };
  const ours: number[] = [], js: number[] = [], fftjs: number[] = [], loop: number[] = [], batch: number[] = [];
  const vsLoop: number[] = [], vsBatch: number[] = [];
  for (let round = 0; round < ROUNDS; round++) {
    const o = rate(() => plan.realForward(x, out));
    js.push(rate(() => planJs.realForward(x, out)));
    fftjs.push(rate(() => ref.realTransform(refOut, x)));
    ours.push(o);
    const p = await py?.ask('fft');
    if (p) {
      loop.push(p.loop!);
      batch.push(p.batch!);
      vsLoop.push(o / p.loop!);
      vsBatch.push(o / p.batch!);
    }
  }
  line('fft', `real FFT 4096, ours (${plan.kernels}) (transforms/s)`, fmt(median(ours), 0));
  line('fft', '  ours, TypeScript kernels', fmt(median(js), 0));
  line('fft', '  fft.js realTransform (the kernel replaced)', fmt(median(fftjs), 0));
  if (loop.length) {
    line('fft', '  numpy.fft.rfft one at a time', fmt(median(loop), 0), `ours ÷ numpy ${fmt(median(vsLoop))}× (median of ${vsLoop.length} rounds)`);
    line('fft', '  scipy.fft.rfft batched (1000×4096)', fmt(median(batch), 0), `ours ÷ scipy ${fmt(median(vsBatch))}×`);
  } else line('fft', '  numpy/scipy', 'unavailable');
}

/** STFT + ISTFT of 60 s at 96 kHz, Hann 2048 / hop 512, streamed in 65536-sample blocks. */
async function stftBench(py: PythonPeer | null): Promise<void> {
  const fs = 96000, len = 60 * fs, fftSize = 2048, hop = 512, block = 65536;
  const sig = Float64Array.from({ length: len }, (_, i) => Math.sin((2 * Math.PI * 1000 * i) / fs) + 0.1 * Math.sin(i * 1.7));
  let err = 0;
  const once = () =>
    timed(() => {
      const p = new StftProcessor({ fftSize, hopSize: hop }, () => {});
      let at = 0;
      const check = (y: Float64Array) => {
        for (let i = 0; i < y.length; i += 997) err = Math.max(err, Math.abs(y[i]! - sig[at + i]!));
        at += y.length;
      };
      for (let i = 0; i < len; i += block) check(p.process(sig.subarray(i, Math.min(len, i + block))));
      check(p.flush());
    });
  once(); // warm-up
  setFftKernels('js');
  const jsRun = once();
  setFftKernels('auto');
  const ours: number[] = [], theirs: number[] = [], ratio: number[] = [], cpuRatio: number[] = [];
  let pyErr = NaN;
  for (let round = 0; round < ROUNDS; round++) {
    const o = once();
    ours.push(o.seconds);
    const p = await py?.ask('stft');
    if (p) {
      theirs.push(p.seconds!);
      ratio.push(p.seconds! / o.seconds);
      cpuRatio.push(p.cpu! / o.cpu);
      pyErr = p.err!;
    }
  }
  const t = median(ours);
  line('stft', 'STFT+ISTFT 60 s 96 kHz, Hann 2048/512 (s)', fmt(t, 3), `${fmt(60 / t, 0)}× real time, max |error| ${err.toExponential(1)}`);
  line('stft', '  ours, TypeScript kernels (s, one run)', fmt(jsRun.seconds, 3));
  if (theirs.length) {
    line(
      'stft',
      '  scipy.signal.ShortTimeFFT stft+istft (s)',
      fmt(median(theirs), 3),
      `scipy ÷ ours ${fmt(median(ratio))}× wall, ${fmt(median(cpuRatio))}× CPU (median of ${ratio.length} rounds; target ≥ 2×), scipy |error| ${pyErr.toExponential(1)}`,
    );
  } else line('stft', '  scipy', 'unavailable');
}
