/**
 * `spectrum`: the long-term average spectrum (Welch, Hann, 50 % overlap) per channel, in dB re a
 * full-scale sine (a full-scale sine reads 0 dBFS at its bin), and the effective bandwidth.
 *
 * Effective bandwidth: the same rule as `levels` on the same sparse Blackman–Harris spectrum
 * (dsp/levels/spectrum.ts, effectiveBandwidthHz and bandwidthSpectrum), so the two always agree.
 * It answers "where does the programme stop?" — about 5 kHz for many acoustic discs, 12–16 kHz for
 * cassettes, the converter's limit for modern material. (The Welch spectrum shown is for reading;
 * its Hann window spills a strong band edge over a few per cent, which would move the answer.)
 *
 * Long files are estimated from at most MAX_FRAMES evenly spaced frames (see welchSpectrum).
 */
import { defineAnalysis, type FindingDraft } from './types.ts';
const algorithms = async () => {
  const [{ welchSpectrum }, { isPowerOfTwo }, { bandwidthSpectrum, effectiveBandwidthHz, announcedBandwidthLevels }] = await Promise.all([
    import('../core/welch.ts'), import('../core/fft.ts'), import('../levels/spectrum.ts'),
  ]);
  return { welchSpectrum, isPowerOfTwo, bandwidthSpectrum, effectiveBandwidthHz, announcedBandwidthLevels };
};
import { CancelledError, ParameterError } from '../errors.ts';
import { lineChartSvg } from '../plot/svg.ts';

/** Frames analysed at most; beyond that, evenly spaced frames stand for the whole file. */
export const MAX_FRAMES = 4000;

export interface SpectrumResult {
  frequenciesHz: number[];
  /** Per channel, dB re full-scale sine. */
  levelsDb: number[][];
  bandwidthHz: number;
  fftSize: number;
  frames: number;
}

const round3 = (v: number) => Math.round(v * 1000) / 1000;

/** Levels of `r` at frequencies `f`: bin by bin on the same grid, else linear in frequency. */
function levelsAt(r: SpectrumResult, channel: number, f: readonly number[]): number[] {
  const src = r.levelsDb[Math.min(channel, r.levelsDb.length - 1)]!;
  const same = r.frequenciesHz.length === f.length && r.frequenciesHz[1] === f[1];
  if (same) return src.slice();
  const df = r.frequenciesHz[1]! - r.frequenciesHz[0]!;
  return f.map((hz) => {
    const pos = hz / df;
    const i = Math.floor(pos);
    if (i >= src.length - 1) return src[src.length - 1]!;
    return src[i]! + (src[i + 1]! - src[i]!) * (pos - i);
  });
}

export const spectrum = defineAnalysis<SpectrumResult>()({
  kind: 'analysis',
  name: 'spectrum',
  key: 'spectrum',
  title: 'Spectrum',
  summary: 'Long-term average spectrum per channel (dBFS, full-scale sine = 0 dB) and the effective bandwidth.',
  params: [
    {
      name: 'fftSize',
      flag: 'fft-size',
      type: 'integer',
      label: 'Analysis size',
      help: 'FFT size in samples (power of two); larger gives finer frequency resolution.',
      unit: 'samples',
      min: 256,
      max: 262144,
      default: 8192,
    },
  ],
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, params, ctx) {
    const { welchSpectrum, isPowerOfTwo, bandwidthSpectrum, effectiveBandwidthHz, announcedBandwidthLevels } = await algorithms();
    const fftSize = params.fftSize ?? 8192;
    if (!isPowerOfTwo(fftSize)) throw new ParameterError(`--fft-size ${fftSize}: must be a power of two`);
    let welchDone = 0, sparseDone = 0;
    const report = () => ctx.progress(0.5 * welchDone + 0.5 * sparseDone);
    // The bandwidth spectrum is the one `levels` measures when it runs over the same source
    // (diagnose, check: announced when it starts, which is before this looks); otherwise it is
    // measured here, in a pass that starts together with the Welch frames, so that under
    // diagnose's shared pass both read the file once.
    const bandwidthLevels = async (): Promise<Float64Array> => {
      await null; // let the analyses started together announce theirs
      const announced = await (announcedBandwidthLevels(source) ?? Promise.resolve(null));
      if (announced) {
        sparseDone = 1;
        return announced;
      }
      const sparse = bandwidthSpectrum(source.sampleRateHz, source.channelCount, source.frames);
      let done = 0;
      for await (const block of source.blocks({ readOnly: true })) {
        if (ctx.signal?.aborted) throw new CancelledError('spectrum cancelled');
        sparse.push(block);
        done += block[0]!.length;
        sparseDone = done / Math.max(1, source.frames);
        report();
      }
      return sparse.levelsDb();
    };
    const [r, levels] = await Promise.all([
      welchSpectrum(source, { fftSize, maxFrames: MAX_FRAMES }, (f) => {
        welchDone = f;
        report();
      }),
      bandwidthLevels(),
    ]);
    const bandwidthHz = levels.length ? Math.round(effectiveBandwidthHz(levels, source.sampleRateHz)) : source.sampleRateHz / 2;
    const levelsDb = r.levelsDb.map((l) => Array.from(l, round3));
    const frequenciesHz = Array.from(r.frequenciesHz, round3);
    return { frequenciesHz, levelsDb, bandwidthHz, fftSize, frames: r.frames };
  },
  findings(result, facts) {
    const nyquist = facts.sampleRateHz / 2;
    const out: FindingDraft[] = [];
    const bw = result.bandwidthHz;
    out.push({
      title: `Effective bandwidth ${(bw / 1000).toFixed(1)} kHz`,
      sentence:
        bw < 0.5 * nyquist
          ? `The programme stops at about ${(bw / 1000).toFixed(1)} kHz, well below the file's ${(nyquist / 1000).toFixed(1)} kHz limit — typical of the original medium, or a sign of a dull playback chain.`
          : `The programme extends to about ${(bw / 1000).toFixed(1)} kHz.`,
      value: Math.round(bw),
      unit: 'Hz',
      severity: 'info',
    });
    return out;
  },
  compare(before, after) {
    const f = before.frequenciesHz;
    const differenceDb = before.levelsDb.map((b, c) => {
      const a = levelsAt(after, c, f);
      return b.map((v, k) => round3(a[k]! - v));
    });
    return { frequenciesHz: f, differenceDb, bandwidthBeforeHz: before.bandwidthHz, bandwidthAfterHz: after.bandwidthHz };
  },
  render(result, format, other) {
    const f = result.frequenciesHz;
    if (format === 'csv') {
      const cols = ['frequencyHz'];
      const rows: number[][] = f.map((hz) => [hz]);
      result.levelsDb.forEach((l, c) => {
        cols.push(other ? `beforeDb_ch${c + 1}` : `levelDb_ch${c + 1}`);
        l.forEach((v, k) => rows[k]!.push(v));
        if (other) {
          const a = levelsAt(other, c, f);
          cols.push(`afterDb_ch${c + 1}`, `differenceDb_ch${c + 1}`);
          a.forEach((v, k) => rows[k]!.push(round3(v), round3(v - l[k]!)));
        }
      });
      return [cols.join(','), ...rows.map((r) => r.join(','))].join('\n') + '\n';
    }
    const x = f.slice(1);
    if (!other) {
      return lineChartSvg({
        title: 'Long-term average spectrum',
        xLabel: 'Frequency (Hz)',
        yLabel: 'Level (dBFS)',
        xLog: true,
        series: result.levelsDb.map((l, c) => ({ label: `channel ${c + 1}`, x, y: l.slice(1) })),
      });
    }
    const before = result.levelsDb[0]!.slice(1);
    const after = levelsAt(other, 0, x);
    const top = lineChartSvg({
      title: 'Before / after (channel 1)',
      xLabel: 'Frequency (Hz)',
      yLabel: 'Level (dBFS)',
      xLog: true,
      series: [
        { label: 'before', x, y: before },
        { label: 'after', x, y: after },
      ],
    });
    const diff = lineChartSvg({
      title: 'Difference (after − before)',
      xLabel: 'Frequency (Hz)',
      yLabel: 'dB',
      xLog: true,
      height: 200,
      series: [{ label: 'difference', x, y: after.map((v, k) => v - before[k]!), color: '#3fa7a0' }],
    });
    const strip = (s: string) => s.replace(/^<svg[^>]*>/, '').replace(/<\/svg>$/, '');
    return (
      `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 640 480" width="640" height="480" font-family="sans-serif" font-size="11">` +
      `<g>${strip(top)}</g><g transform="translate(0 280)">${strip(diff)}</g></svg>`
    );
  },
});
