/**
 * Varispeed and speed-analysis throughput.
 *
 * Varispeed: 60 s of 96 kHz stereo converted by 160/147 (44.1 → 48 kHz style) and by factor
 * 1.0307 (play 3.07 % faster), archive quality, beside scipy.signal.resample_poly doing the same
 * conversion with a Kaiser-windowed FIR designed to the same stopband: cutoff 0.475 × the lower
 * rate, β = kaiser_beta(147), half-length 97 lower-rate samples (the parameters are printed with
 * the measured stopband of scipy's filter). Ours and scipy's runs alternate, best of 3 each, so
 * load from other processes hits both alike; numbers on a shared machine are still noisy.
 *
 * Speed analysis: 60 s of 96 kHz stereo (programme-like noise + hum), seconds and × real time.
 *
 * Run alone: `npm run bench -- speed`.
 */
import { Resampler } from '../dsp/core/resample.ts';
import { kernelDesign, type ResampleQuality } from '../dsp/core/resample-kernel.ts';
import { estimateSpeed } from '../dsp/speed/estimate.ts';
import { MemorySource } from '../dsp/source.ts';
import { silentContext } from '../dsp/ops/types.ts';
import { fmt, line, python } from './util.ts';

const FS = 96000;
const SECONDS = 60;

function signal(): Float64Array[] {
  const n = FS * SECONDS;
  let seed = 99;
  const l = new Float64Array(n), r = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    seed = (seed * 1103515245 + 12345) >>> 0;
    const w = seed / 4294967296 - 0.5;
    l[i] = 0.3 * Math.sin(i * 0.0123) + 0.1 * w;
    r[i] = 0.3 * Math.sin(i * 0.0456) - 0.1 * w;
  }
  return [l, r];
}

function oursSeconds(x: Float64Array[], ratio: number, quality: ResampleQuality, engine: 'auto' | 'js'): { seconds: number; engine: string } {
  const t0 = process.hrtime.bigint();
  const r = new Resampler({ channelCount: 2, ratio, quality, engine });
  const n = x[0]!.length;
  const block = 65536;
  for (let i = 0; i < n; i += block) r.process(x.map((c) => c.subarray(i, Math.min(n, i + block))));
  r.flush();
  return { seconds: Number(process.hrtime.bigint() - t0) / 1e9, engine: r.engine };
}

function scipySeconds(up: number, down: number): { run: number; design: number; taps: number; beta: number; stopDb: number } | null {
  const d = kernelDesign('archive');
  const py = python(`
import json, time, numpy as np
from scipy import signal
up, down, fs, secs = ${up}, ${down}, ${FS}, ${SECONDS}
x = np.random.default_rng(1).standard_normal((fs * secs, 2)) * 0.1
m = max(up, down)
beta = signal.kaiser_beta(${d.designAttenuationDb})
half = int(np.ceil(${d.halfWidth} * m))
t0 = time.perf_counter()
h = signal.firwin(2 * half + 1, 0.95 / m, window=("kaiser", beta))
design = time.perf_counter() - t0
# Measured stopband of this prototype: worst |H| at and above the lower rate's Nyquist.
if 2 * half + 1 <= 200000:
    H = np.abs(np.fft.rfft(h, 1 << 22)); f = np.arange(H.size) / (1 << 22)  # cycles per up-rate sample
    stop = 20 * np.log10(H[f >= 0.5 / m].max() / H[0])
else:
    stop = None
t0 = time.perf_counter()
y = signal.resample_poly(x, up, down, axis=0, window=h)
run = time.perf_counter() - t0
print(json.dumps({"run": run, "design": design, "taps": 2 * half + 1, "beta": beta, "stopDb": stop}))
`);
  if (!py) return null;
  return { run: Number(py.run), design: Number(py.design), taps: Number(py.taps), beta: Number(py.beta), stopDb: py.stopDb === null || py.stopDb === undefined ? NaN : Number(py.stopDb) };
}

export default async function run(): Promise<void> {
  const x = signal();
  const d = kernelDesign('archive');
  line('speed', `kernel: Kaiser β ${d.beta.toFixed(3)}, ${(2 * d.halfWidth).toFixed(1)} taps/lower-rate sample`, '', `cutoff ${d.cutoff}, pass ${d.passbandEdge}, stop ${d.stopbandEdge} × lower rate`);
  for (const [label, up, down] of [['160/147', 160, 147], ['factor 1.0307', 10000, 10307]] as const) {
    const ratio = up / down;
    let best = Infinity, bestPy: ReturnType<typeof scipySeconds> = null, engine = '';
    for (let rep = 0; rep < 3; rep++) {
      const o = oursSeconds(x, ratio, 'archive', 'auto');
      engine = o.engine;
      best = Math.min(best, o.seconds);
      const p = scipySeconds(up, down);
      if (p && (!bestPy || p.run < bestPy.run)) bestPy = p;
    }
    line('speed', `varispeed ${label}, 60 s 96 kHz stereo, archive (s)`, fmt(best, 2), `${fmt(SECONDS / best, 1)}× real time [${engine}]`);
    if (bestPy) {
      line(
        'speed',
        `  scipy resample_poly up=${up} down=${down} (s)`,
        fmt(bestPy.run, 2),
        `ratio ${fmt(bestPy.run / best)}× (target ≥ 1×); +${fmt(bestPy.design, 2)} s filter design; ${bestPy.taps} taps, β ${bestPy.beta.toFixed(3)}` +
          (Number.isFinite(bestPy.stopDb) ? `, measured stopband ${bestPy.stopDb.toFixed(1)} dB` : ', same kernel'),
      );
    } else line('speed', '  scipy', 'unavailable');
  }
  // Draft and the plain-JavaScript path, for reference.
  const draft = oursSeconds(x, 1 / 1.0307, 'draft', 'auto');
  line('speed', 'varispeed factor 1.0307, draft (s)', fmt(draft.seconds, 2), `${fmt(SECONDS / draft.seconds, 1)}× real time [${draft.engine}]`);
  const js = oursSeconds(x, 160 / 147, 'archive', 'js');
  line('speed', 'varispeed 160/147, archive, plain JS engine (s)', fmt(js.seconds, 2), `${fmt(SECONDS / js.seconds, 1)}× real time`);

  // Speed analysis on 60 s of 96 kHz stereo with hum.
  const n = FS * SECONDS;
  const withHum = x.map((c) => {
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) y[i] = c[i]! + 0.003 * Math.sin((2 * Math.PI * 50 * 1.02 * i) / FS);
    return y;
  });
  const t0 = process.hrtime.bigint();
  const res = await estimateSpeed(new MemorySource(withHum, FS), {}, silentContext);
  const secs = Number(process.hrtime.bigint() - t0) / 1e9;
  line('speed', 'speed analysis, 60 s 96 kHz stereo (s)', fmt(secs, 2), `${fmt(SECONDS / secs, 0)}× real time; 1 h ≈ ${fmt((secs * 60) / 60, 1)} min; read ${res.method} ${res.factor.toFixed(5)}`);
}

if (import.meta.url === `file://${process.argv[1]}`) await run();
