/**
 * `info`: per-channel sample statistics for the file's record — peak and RMS in dBFS, DC offset
 * and the number of samples at full scale (clipped). Levels: a full-scale sine peaks at 0 dBFS,
 * so its RMS reads −3.01 dBFS (AES17 convention).
 */
import { defineAnalysis, type FindingDraft } from './types.ts';
import { gainToDb, powerToDb } from '../units.ts';

export interface ChannelStats {
  channel: number;
  peakDbfs: number;
  rmsDbfs: number;
  dcOffset: number;
  clippedSamples: number;
}

export interface InfoResult {
  channels: ChannelStats[];
}

/** Samples at or beyond this magnitude count as clipped. For integer formats this is the largest
 * positive code, (2^(b−1) − 1)/2^(b−1); the negative extreme −1 is included by the ≥ test. */
export function clipThreshold(bitsPerSample: number | undefined, sampleFormat: 'int' | 'float' | undefined): number {
  if (sampleFormat === 'float' || bitsPerSample === undefined) return 1;
  const full = 2 ** (bitsPerSample - 1);
  return (full - 1) / full;
}

export const info = defineAnalysis<InfoResult>()({
  kind: 'analysis',
  name: 'info',
  key: 'info',
  // Its clipping and DC figures are part of `levels`, which diagnose and check run instead.
  inDiagnose: false,
  title: 'File facts',
  summary: 'Format, length, per-channel peak, RMS, DC offset, clipped samples and the audio checksum.',
  params: [],
  async run(source, _params, ctx) {
    const n = source.channelCount;
    const peak = new Float64Array(n);
    const sum = new Float64Array(n);
    const sumSq = new Float64Array(n);
    const clipped = new Float64Array(n);
    const meta = source as { bitsPerSample?: number; sampleFormat?: 'int' | 'float' };
    const limit = clipThreshold(meta.bitsPerSample, meta.sampleFormat);
    let done = 0;
    for await (const block of source.blocks()) {
      for (let c = 0; c < n; c++) {
        const x = block[c]!;
        let p = peak[c]!, s = 0, s2 = 0, k = 0;
        for (let i = 0; i < x.length; i++) {
          const v = x[i]!;
          const a = Math.abs(v);
          if (a > p) p = a;
          if (a >= limit) k++;
          s += v;
          s2 += v * v;
        }
        peak[c] = p;
        sum[c]! += s;
        sumSq[c]! += s2;
        clipped[c]! += k;
      }
      done += block[0]!.length;
      ctx.progress(done / Math.max(1, source.frames));
    }
    const frames = Math.max(1, source.frames);
    const channels: ChannelStats[] = [];
    for (let c = 0; c < n; c++) {
      channels.push({
        channel: c + 1,
        peakDbfs: gainToDb(peak[c]!),
        // Plain RMS re full scale: a full-scale sine reads −3.01 dBFS.
        rmsDbfs: powerToDb(sumSq[c]! / frames),
        dcOffset: sum[c]! / frames,
        clippedSamples: clipped[c]!,
      });
    }
    return { channels };
  },
  findings(result) {
    const out: FindingDraft[] = [];
    for (const ch of result.channels) {
      if (ch.clippedSamples > 0) {
        out.push({
          title: `Channel ${ch.channel}: ${ch.clippedSamples} samples at full scale`,
          sentence: `Channel ${ch.channel} has ${ch.clippedSamples} samples at full scale, which usually means the transfer clipped.`,
          value: ch.clippedSamples,
          unit: 'samples',
          severity: 'warn',
        });
      }
      if (Math.abs(ch.dcOffset) > 0.001) {
        out.push({
          title: `Channel ${ch.channel}: DC offset ${(ch.dcOffset * 100).toFixed(2)} % of full scale`,
          sentence: `Channel ${ch.channel} sits off centre by ${(ch.dcOffset * 100).toFixed(2)} % of full scale (a DC offset from the converter or the playback chain).`,
          value: ch.dcOffset,
          severity: 'info',
        });
      }
    }
    return out;
  },
});
