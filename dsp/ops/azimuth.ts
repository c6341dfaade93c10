/**
 * `azimuth`: the delay between channels 1 and 2 below one sample (cross-spectrum phase slope,
 * dsp/azimuth/delay.ts), their coherence, the first null of the mono sum, and — given the tape
 * speed and the track spacing — the equivalent head azimuth error in arc-minutes.
 */
import { defineAnalysis, type FindingDraft } from './types.ts';
import { ParameterError } from '../errors.ts';
import type { DelayEstimate } from '../azimuth/delay.ts';

const algorithms = () => import('../azimuth/delay.ts');
import { fixedOrDash, numberOf, objectOf, roundTo, sectionNumber } from './sections.ts';

const micro = (v: number | undefined) => (v === undefined ? undefined : v * 1e6);

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
  /** Delays fitted on the lower and upper halves of the coherent band (seconds). */
  bandDelaysSeconds: [number, number];
  /** Share of the analysed band coherent enough to enter the fit. */
  coherentShare: number;
  /** Delays of the first and second half of the file measured apart (null: too little signal). */
  halfDelaysSeconds: [number | null, number | null];
  /** Largest delay a playback head could make at the given (or assumed) tape format, seconds. */
  headLimitSeconds: number;
  /**
   * What the delay is evidence of: 'head' (one clean time offset between two tracks of the same
   * programme, within what a head can make), 'programme' (the channels differ: stereo programme,
   * spaced microphones, processing), or null (too little common signal to tell).
   */
  verdict: 'head' | 'programme' | null;
}

/**
 * Evidence for a head azimuth error (our own rule, from the physics of the error: a tilted gap
 * delays one track against the other by Δt = d·tan θ / v at every frequency):
 *  - the channels carry the same programme: power-weighted coherence ≥ 0.95 over at least 5 % of
 *    the band;
 *  - one delay explains the phase at every frequency and all the time: the delays fitted on the
 *    lower and upper halves of the coherent band, and on the first and second half of the file,
 *    agree within max(0.5 µs, 5 %, 4 standard errors);
 *  - the delay is one a head can make: |Δt| ≤ d·tan 2° / v at the given tape format, or 1 ms when
 *    it is not given (a 2° error on quarter-track tape at 1⅞ ips is about 1 ms; common practice:
 *    real azimuth errors give a few µs to a few hundred).
 * Stereo programme and spaced microphones fail the first two (their inter-channel delays differ
 * by frequency and source), and often the last (milliseconds).
 */
const MIN_HEAD_COHERENCE = 0.95;
const MIN_COHERENT_SHARE = 0.05;
const DEFAULT_HEAD_LIMIT_SECONDS = 1e-3;

export function headLimitSeconds(tapeSpeedIps: number | null, trackSpacingMm: number | null): number {
  if (tapeSpeedIps === null || trackSpacingMm === null) return DEFAULT_HEAD_LIMIT_SECONDS;
  return (trackSpacingMm * Math.tan((2 * Math.PI) / 180)) / (tapeSpeedIps * 25.4);
}

function verdictOf(est: DelayEstimate, limit: number): 'head' | 'programme' | null {
  if (est.coherence < 0.3 || est.coherentShare < 0.05) return null;
  const d = est.delaySeconds;
  const tol = Math.max(0.5e-6, 0.05 * Math.abs(d), 4 * est.standardErrorSeconds);
  const [lo, hi] = est.bandDelaysSeconds;
  const [first, second] = est.halfDelaysSeconds;
  const steady = first === null || second === null || (Math.abs(first - d) <= 2 * tol && Math.abs(second - d) <= 2 * tol);
  const consistent = Math.abs(lo - hi) <= tol && steady;
  if (est.coherence >= MIN_HEAD_COHERENCE && est.coherentShare >= MIN_COHERENT_SHARE && consistent && Math.abs(d) <= limit) return 'head';
  return 'programme';
}

const us = (s: number) => `${(s * 1e6).toFixed(1)} µs`;

export const azimuth = defineAnalysis<AzimuthResult>()({
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
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, params, ctx) {
    const { azimuthArcMinutes, crossSpectrum, estimateDelay, monoNullHz } = await algorithms();
    if (source.channelCount < 2) throw new ParameterError('azimuth needs at least two channels');
    const ips = params.tapeSpeedIps ?? null;
    const mm = params.trackSpacingMm ?? null;
    const est = estimateDelay(await crossSpectrum(source, ctx));
    const limit = headLimitSeconds(ips, mm);
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
      bandDelaysSeconds: est.bandDelaysSeconds,
      coherentShare: est.coherentShare,
      halfDelaysSeconds: est.halfDelaysSeconds,
      headLimitSeconds: limit,
      verdict: verdictOf(est, limit),
    };
  },
  findings(r, facts) {
    const out: FindingDraft[] = [];
    const d = r.delaySeconds;
    const lagging = d >= 0 ? 'Channel 2 lags channel 1' : 'Channel 1 lags channel 2';
    const angle = r.azimuthArcMinutes !== null ? ` At ${r.tapeSpeedIps} ips with tracks ${r.trackSpacingMm} mm apart that is ${Math.abs(r.azimuthArcMinutes).toFixed(1)} arc-minutes of azimuth error.` : '';
    if (r.verdict === null) {
      out.push({
        title: 'Channels too different to judge azimuth', severity: 'info', value: Math.round(r.coherence * 100) / 100,
        sentence: `The two channels share little common signal (coherence ${r.coherence.toFixed(2)}), so azimuth cannot be judged from this programme; a mono section or a line-up tone would show it.`,
      });
      return out;
    }
    if (r.verdict === 'programme' && Math.abs(d) >= 2e-6) {
      const ms = Math.abs(d) >= 1e-3;
      out.push({
        title: `Channels differ (${ms ? `${(Math.abs(d) * 1000).toFixed(2)} ms` : us(Math.abs(d))} apart on average)`, severity: 'info',
        value: Math.round(d * 1e7) / 10, unit: 'µs',
        sentence:
          `The channels are not two tracks of the same signal with a time offset: ${Math.abs(d) > r.headLimitSeconds ? `their delay of ${ms ? `${(Math.abs(d) * 1000).toFixed(2)} ms` : us(Math.abs(d))} is more than a playback head can make${r.tapeSpeedIps !== null && r.trackSpacingMm !== null ? ` at ${r.tapeSpeedIps} ips with tracks ${r.trackSpacingMm} mm apart` : ''}, and ` : ''}` +
          `their timing differs with frequency (${us(r.bandDelaysSeconds[0])} in the lower band, ${us(r.bandDelaysSeconds[1])} in the upper; coherence ${r.coherence.toFixed(2)}) — stereo programme, spaced microphones or processing, not head azimuth. Leave the channels as they are; check azimuth on a mono section or a line-up tone.`,
      });
      return out;
    }
    const nullHz = r.monoNullHz;
    if (nullHz === null || Math.abs(d) < 2e-6) {
      out.push({
        title: `Channels aligned (${us(d)})`, severity: 'ok', value: Math.round(d * 1e7) / 10, unit: 'µs',
        sentence: r.verdict === 'head'
          ? `The channels line up within ${us(Math.abs(d))}: the head azimuth is good.${angle}`
          : `The channels line up within ${us(Math.abs(d))} on average; they carry different programme (stereo), so that says little about the head — check azimuth on a mono section or a line-up tone.`,
      });
      return out;
    }
    const audible = nullHz < Math.min(20000, facts.sampleRateHz / 2);
    out.push({
      title: `${lagging} by ${us(Math.abs(d))}`,
      sentence:
        `${lagging} by ${us(Math.abs(d))} (${Math.abs(r.delaySamples).toFixed(2)} samples) at every frequency, with the same programme on both (coherence ${r.coherence.toFixed(2)}): head azimuth error.${angle} ` +
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

  // The batch report's columns and the check's gates.
  columns: [
    { header: 'azimuthDelayMicroseconds', get: (s) => roundTo(micro(sectionNumber(s, 'azimuth', 'delaySeconds')), 2) },
    { header: 'azimuthCoherence', get: (s) => roundTo(sectionNumber(s, 'azimuth', 'coherence'), 3) },
    { header: 'azimuthMonoNullHz', get: (s) => roundTo(sectionNumber(s, 'azimuth', 'monoNullHz'), 0) },
  ],
  overview: [{ heading: 'Azimuth µs', text: (s) => fixedOrDash(micro(sectionNumber(s, 'azimuth', 'delaySeconds')), 1) }],
  metrics: [
    {
      id: 'azimuth.delayMicroseconds', label: 'inter-channel delay', unit: 'µs', digits: 1,
      get: (s) => {
        const a = objectOf(s.azimuth);
        // Judged only where the delay is evidence of the head (the azimuth analysis's verdict):
        // stereo programme's own inter-channel timing is not a transfer fault.
        const d = numberOf(a?.delaySeconds);
        return d === undefined || a?.verdict !== 'head' ? undefined : Math.abs(d) * 1e6;
      },
      defaultRule: {
        warnAt: 10, failAt: 25,
        comment: 'Absolute delay between channels 1 and 2 (only judged when it is a head\'s delay: the same programme on both tracks, one delay at every frequency). 25 us puts the first mono-sum null at 20 kHz.',
      },
    },
  ],
});
