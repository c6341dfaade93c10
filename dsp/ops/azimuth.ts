/**
 * `azimuth`: the delay between channels 1 and 2 below one sample (cross-spectrum phase slope,
 * dsp/azimuth/delay.ts), their coherence, the first null of the mono sum, and — given the tape
 * speed and the track spacing — the equivalent head azimuth error in arc-minutes.
 */
import type { AnalysisOp, Finding } from './types.ts';
import { num } from './params.ts';
import { ParameterError } from '../errors.ts';
import { azimuthArcMinutes, crossSpectrum, estimateDelay, monoNullHz } from '../azimuth/delay.ts';

export interface AzimuthResult {
  /** Positive when channel 2 lags channel 1. */
  delaySeconds: number;
  delaySamples: number;
  coherence: number;
  /** First null of the mono sum, 1/(2|τ|); null for no delay. */
  monoNullHz: number | null;
  /** Null unless both the tape speed and the track spacing are given. */
  azimuthArcMinutes: number | null;
  standardErrorSeconds: number;
  bandHz: [number, number];
  tapeSpeedIps: number | null;
  trackSpacingMm: number | null;
}

const us = (s: number) => `${(s * 1e6).toFixed(1)} µs`;

export const azimuth: AnalysisOp<AzimuthResult> = {
  kind: 'analysis',
  name: 'azimuth',
  key: 'azimuth',
  title: 'Azimuth',
  summary: 'Delay between the two channels (below one sample), coherence, mono-sum null and the equivalent head azimuth error.',
  params: [
    {
      name: 'tapeSpeedIps', flag: 'tape-speed-ips', type: 'number', label: 'Tape speed', unit: 'ips',
      help: 'Tape speed of the transfer in inches per second (1.875, 3.75, 7.5, 15, 30), for the azimuth angle.',
      min: 0.5, max: 60,
    },
    {
      name: 'trackSpacingMm', flag: 'track-spacing-mm', type: 'number', label: 'Track spacing', unit: 'mm',
      help: 'Distance between the centres of the two tracks in mm (about 4.1 NAB two-track, 3.5 DIN, 0.9 cassette), for the azimuth angle.',
      min: 0.1, max: 50,
    },
  ],
  applies: (facts) => facts.channelCount >= 2,
  async run(source, params, ctx) {
    if (source.channelCount < 2) throw new ParameterError('azimuth needs at least two channels');
    const ips = num(params, 'tapeSpeedIps') ?? null;
    const mm = num(params, 'trackSpacingMm') ?? null;
    const est = estimateDelay(await crossSpectrum(source, ctx));
    return {
      delaySeconds: est.delaySeconds,
      delaySamples: est.delaySamples,
      coherence: est.coherence,
      monoNullHz: monoNullHz(est.delaySeconds),
      azimuthArcMinutes: ips !== null && mm !== null ? azimuthArcMinutes(est.delaySeconds, ips, mm) : null,
      standardErrorSeconds: est.standardErrorSeconds,
      bandHz: est.bandHz,
      tapeSpeedIps: ips,
      trackSpacingMm: mm,
    };
  },
  findings(r, facts) {
    const out: Finding[] = [];
    const d = r.delaySeconds;
    const lagging = d >= 0 ? 'Channel 2 lags channel 1' : 'Channel 1 lags channel 2';
    const angle = r.azimuthArcMinutes !== null ? ` At ${r.tapeSpeedIps} ips with tracks ${r.trackSpacingMm} mm apart that is ${Math.abs(r.azimuthArcMinutes).toFixed(1)} arc-minutes of azimuth error.` : '';
    if (r.coherence < 0.3) {
      out.push({
        op: 'azimuth', title: 'Channels too different to judge azimuth', severity: 'info', value: Math.round(r.coherence * 100) / 100,
        sentence: `The two channels share little common signal (coherence ${r.coherence.toFixed(2)}), so the measured delay of ${us(d)} is uncertain.`,
      });
      return out;
    }
    const nullHz = r.monoNullHz;
    if (nullHz === null || Math.abs(d) < 2e-6) {
      out.push({
        op: 'azimuth', title: `Channels aligned (${us(d)})`, severity: 'ok', value: Math.round(d * 1e7) / 10, unit: 'µs',
        sentence: `The channels line up within ${us(Math.abs(d))}: the head azimuth is good.${angle}`,
      });
      return out;
    }
    const audible = nullHz < Math.min(20000, facts.sampleRateHz / 2);
    out.push({
      op: 'azimuth',
      title: `${lagging} by ${us(Math.abs(d))}`,
      sentence:
        `${lagging} by ${us(Math.abs(d))} (${Math.abs(r.delaySamples).toFixed(2)} samples), a sign of head azimuth error.${angle} ` +
        (audible
          ? `Summed to mono, the treble cancels near ${(nullHz / 1000).toFixed(1)} kHz; re-align the playback head and transfer again, or remove the delay.`
          : `The first cancellation in a mono sum falls at ${(nullHz / 1000).toFixed(1)} kHz, above the audible band, but the stereo image is slightly skewed.`),
      value: Math.round(d * 1e7) / 10,
      unit: 'µs',
      confidence: r.coherence,
      severity: audible ? 'warn' : 'info',
      suggestion: { op: 'align', params: { delaySeconds: d } },
    });
    return out;
  },
};
