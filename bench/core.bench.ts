/** FFT and STFT+ISTFT throughput beside numpy/scipy doing the same work. */
import { FftPlan } from '../dsp/core/fft.ts';
import { StftProcessor } from '../dsp/core/stft.ts';
import { fmt, line, python, timeIt } from './util.ts';

export default async function run(): Promise<void> {
  // FFT: 4096-point real transforms per second.
  const n = 4096;
  const plan = new FftPlan(n);
  const x = Float64Array.from({ length: n }, (_, i) => Math.sin(i * 0.01) + ((i * 7919) % 13) / 13);
  const out = plan.createHalfSpectrum();
  const reps = 1000;
  const t = timeIt(() => {
    for (let r = 0; r < reps; r++) plan.realForward(x, out);
  });
  const ours = reps / t.seconds;
  const py = python(`
import json, time, numpy as np, scipy.fft as sf
x = np.random.default_rng(1).standard_normal((1000, 4096))
def best(f, k=5):
    b = 1e9
    for _ in range(k):
        t = time.perf_counter(); f(); b = min(b, time.perf_counter() - t)
    return b
loop = best(lambda: [np.fft.rfft(r) for r in x])
batch = best(lambda: sf.rfft(x, axis=1))
print(json.dumps({"loop": 1000 / loop, "batch": 1000 / batch}))
`);
  line('fft', 'real FFT 4096 (transforms/s)', fmt(ours, 0));
  if (py) {
    line('fft', '  numpy.fft.rfft one at a time', fmt(Number(py.loop), 0), `ratio ${fmt(ours / Number(py.loop))}×`);
    line('fft', '  scipy.fft.rfft batched (1000×4096)', fmt(Number(py.batch), 0), `ratio ${fmt(ours / Number(py.batch))}×`);
  } else line('fft', '  numpy/scipy', 'unavailable');

  // STFT + ISTFT of 60 s at 96 kHz, Hann 2048 / hop 512.
  const fs = 96000, len = 60 * fs, fftSize = 2048, hop = 512;
  const sig = Float64Array.from({ length: len }, (_, i) => Math.sin((2 * Math.PI * 1000 * i) / fs) + 0.1 * Math.sin(i * 1.7));
  const block = 65536;
  const st = timeIt(() => {
    const p = new StftProcessor({ fftSize, hopSize: hop }, () => {});
    for (let i = 0; i < len; i += block) p.process(sig.subarray(i, Math.min(len, i + block)));
    p.flush();
  }, 2);
  const pySt = python(`
import json, time, numpy as np
from scipy.signal import ShortTimeFFT, windows
fs, n = 96000, 60 * 96000
x = np.sin(2 * np.pi * 1000 * np.arange(n) / fs) + 0.1 * np.sin(np.arange(n) * 1.7)
S = ShortTimeFFT(windows.hann(2048, sym=False), hop=512, fs=fs)
best = 1e9
for _ in range(3):
    t = time.perf_counter(); Z = S.stft(x); y = S.istft(Z, k1=n); best = min(best, time.perf_counter() - t)
print(json.dumps({"seconds": best, "err": float(np.max(np.abs(y - x)))}))
`);
  line('stft', 'STFT+ISTFT 60 s 96 kHz, Hann 2048/512 (s)', fmt(st.seconds, 3), `${fmt(60 / st.seconds, 0)}× real time`);
  if (pySt) {
    line('stft', '  scipy.signal.ShortTimeFFT stft+istft (s)', fmt(Number(pySt.seconds), 3), `ratio ${fmt(Number(pySt.seconds) / st.seconds)}× (target ≥ 2×)`);
  } else line('stft', '  scipy', 'unavailable');
}
