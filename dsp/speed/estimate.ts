/**
 * Speed estimation: runs the hum, tone and tuning estimators over a source (two streaming passes
 * plus a short ranged read for a tone) and combines their candidates into one answer.
 *
 * Contract (ARCHITECTURE.md): factor = played speed ÷ recorded speed; cents = 1200·log2(factor);
 * method "hum" | "tone" | "tuning" | null; confidence 0–1; uncertaintyPercent (standard
 * uncertainty of the factor, in percent); standardPair; candidates[{method, factor, confidence}];
 * curve {timesSeconds[], factors[]} (the speed through the file, from hum or tone).
 *
 * Choice: the candidate with the highest confidence; when none reaches 0.5 the result says so
 * (method null, factor 1, no pair) instead of guessing.
 */
import { CancelledError, NotFoundError, ParameterError } from '../errors.ts';
import type { AudioSource } from '../source.ts';
import type { OpContext } from '../context.ts';
import { HumSearch, HumTracker, establishedHarmonics, humHypotheses, judgedInconsistentShare, persistenceEvidence, type HumMeasurement } from './hum.ts';
import { ToneRefiner, ToneScanner, toneHypotheses, type ToneMeasurement } from './tone.ts';
import { TuningScanner, type TuningMeasurement } from './tuning.ts';
import { standardPairText } from './standard.ts';

export type SpeedMethod = 'hum' | 'tone' | 'tuning';

export interface SpeedCandidate {
  method: SpeedMethod;
  factor: number;
  confidence: number;
  /** Hum: the mains frequency assumed. */
  mainsHz?: number;
  /** Tone: the nominal tone frequency assumed and where it was heard. */
  toneHz?: number;
  observedHz?: number;
  uncertaintyPercent?: number;
}

export interface SpeedResult {
  factor: number;
  cents: number;
  method: SpeedMethod | null;
  confidence: number;
  uncertaintyPercent: number | null;
  standardPair: string | null;
  candidates: SpeedCandidate[];
  curve: { timesSeconds: number[]; factors: number[] };
  /** Mains frequency behind a hum answer. */
  mainsHz: number | null;
  /** Observed hum fundamental in the file (Hz), when hum was found. */
  humHz: number | null;
  /** Nominal reference tone and where it sits in the file. */
  toneHz: number | null;
  toneInFileHz: number | null;
  /** Deviation of the music from A4 = 440 Hz equal temperament (cents), when measured. */
  tuningCents: number | null;
  /** Ambiguities and caveats in plain words. */
  notes: string[];
}

export interface SpeedOptions {
  mainsHz?: 50 | 60;
  toneHz?: number;
  /** Methods to run (default all). */
  methods?: readonly SpeedMethod[];
}

const clamp01 = (x: number) => Math.max(0, Math.min(1, x));
/** A quiet-weighted series this close (relative) to a stronger hum series is read as its sideband. */
const SIDEBAND_SHARE = 0.05;
/** A lone line's weight (seriesShown): below 0.5 at full evidence. */
const LONE_LINE_SHARE = 0.45;

/**
 * Evidence (0–1) that a measured series is mains hum: it must stand clearly above noise (coherent
 * harmonic-sum statistic: from 1 dB above what noise alone reaches in the search, to 6 dB above it),
 * be there all the time (steadiness: music partials come and go), persist at one level through
 * the file (`persistenceEvidence`, stricter under quiet weights).
 */
function humEvidence(m: HumMeasurement): number {
  const detection = clamp01((m.detectionDb - m.noiseDetectionDb - 1) / 5);
  const steady = clamp01((m.steadiness - 0.6) / 0.3);
  // Under quiet weights the bursts no longer blur the segments' readings, so hum shows at its one
  // level in nearly every judged segment; a drum's ringing that each hit starts again (steady
  // only in the long run, where a loop repeats) does not: full weight up to 6 % of the judged
  // cells off the level, none from 10 % (counting the harmonics judged in ≥ 30 % of the
  // segments, as persistenceEvidence does).
  const level = m.quiet ? clamp01((0.1 - judgedInconsistentShare(m.persistence)) / 0.04) : 1;
  // The fundamental is mains hum's strongest line. When it cannot be judged (a note or a loop's
  // ringing beside it) the series is inferred from its upper harmonics alone, which a drum loop's
  // lines (at multiples of its repetition rate) can also supply: × 0.9, below the 0.9 claims.
  const fundamentalShown = establishedHarmonics(m.harmonicsUsed, m.persistence).includes(1) ? 1 : 0.9;
  return fundamentalShown * detection * steady * level * persistenceEvidence(m.harmonicsUsed, m.persistence);
}

/**
 * Mains hum is a series of lines (odd harmonics often stronger, common practice). One line alone,
 * with no second harmonic of it established in this measurement or in another one of the same
 * fundamental (plain and quiet-weighted tracks see different parts of the file), is weaker
 * evidence (a steady low component of the programme can be one line): × LONE_LINE_SHARE, so that
 * even at full evidence it stays below the 0.5 a claim needs (it can still be corroborated by the
 * tuning or a tone), unless the line shows at its level in nearly every segment.
 */
function seriesShown(m: HumMeasurement, all: readonly HumMeasurement[], durationSeconds: number): number {
  const tol = Math.max(5e-4 * m.meanFundamentalHz, 2 / durationSeconds);
  const shown = (x: HumMeasurement) => establishedHarmonics(x.harmonicsUsed, x.persistence).length >= 2;
  if (shown(m)) return 1;
  if (all.some((o) => o !== m && Math.abs(o.meanFundamentalHz - m.meanFundamentalHz) <= tol && shown(o))) return 1;
  // A hum that is one pure line (filtered, or its harmonics masked) must then show in nearly every
  // segment at its level: judged in ≥ 95 % of them, off its level in ≤ 5 %.
  const f = m.persistence.perHarmonic[m.harmonicsUsed.indexOf(1)];
  return f && f.coverage >= 0.95 && f.inconsistentShare <= 0.05 ? 1 : LONE_LINE_SHARE;
}

/**
 * A speed a transfer can plausibly have: within ±3 semitones of right (a machine or disc off its
 * speed, common practice), or within 0.5 % of a ratio of standard speeds (standard.ts).
 */
function plausibleFactor(factor: number): boolean {
  return Math.abs(1200 * Math.log2(factor)) <= 300 || standardPairText(factor) !== null;
}

/**
 * Share of a's harmonic power (linear SNR) that falls on harmonics of b. Harmonic h of a is on
 * harmonic k of b when |h·f_a − k·f_b| ≤ h·max(0.05 % of f_a, 2/T): two lines closer than the
 * main-lobe half-width of a Hann-tapered record of T seconds (2/T) cannot be told apart, and an
 * offset of a's fundamental grows h-fold at its h-th harmonic (common practice).
 */
function sharedShare(a: HumMeasurement, b: HumMeasurement, durationSeconds: number): number {
  let total = 0, shared = 0;
  const tol = Math.max(5e-4 * a.meanFundamentalHz, 2 / durationSeconds);
  a.harmonicsUsed.forEach((h, j) => {
    const snr = Math.pow(10, (a.harmonicSnrDb[j] ?? -99) / 10);
    total += snr;
    const f = h * a.meanFundamentalHz;
    const k = Math.round(f / b.meanFundamentalHz);
    if (k >= 1 && Math.abs(f - k * b.meanFundamentalHz) <= h * tol) shared += snr;
  });
  return total > 0 ? shared / total : 0;
}
const fmtHz = (v: number) => (v >= 100 ? v.toFixed(2) : v.toFixed(3));

/** Mono mix of a planar block (mean of the channels). */
function monoMix(block: Float64Array[], out: Float64Array): Float64Array {
  const n = block[0]!.length;
  const y = out.length >= n ? out.subarray(0, n) : new Float64Array(n);
  const C = block.length;
  if (C === 1) {
    y.set(block[0]!);
    return y;
  }
  y.fill(0);
  for (const ch of block) for (let i = 0; i < n; i++) y[i]! += ch[i]!;
  const g = 1 / C;
  for (let i = 0; i < n; i++) y[i]! *= g;
  return y;
}

export async function estimateSpeed(source: AudioSource, options: SpeedOptions, ctx: OpContext): Promise<SpeedResult> {
  const fs = source.sampleRateHz;
  const N = source.frames;
  const methods = new Set(options.methods ?? ['hum', 'tone', 'tuning']);
  if (options.toneHz !== undefined && !(options.toneHz > 0 && options.toneHz < fs / 2)) {
    throw new ParameterError(`--tone ${options.toneHz}: must be between 0 and ${fs / 2} Hz (half the sample rate)`);
  }
  if (N < fs) throw new NotFoundError(`too short to measure speed (${(N / fs).toFixed(2)} s; at least 1 s is needed)`);
  const notes: string[] = [];
  const aborted = () => {
    if (ctx.signal?.aborted) throw new CancelledError('speed analysis cancelled');
  };

  // Pass 1: hum search spectrum, tone frames at head/tail, tuning frames.
  const hum = methods.has('hum') ? new HumSearch(fs, N) : null;
  const toneSearch: [number, number] | undefined = options.toneHz ? [options.toneHz * 0.25, options.toneHz * 4] : undefined;
  const tone = methods.has('tone') ? new ToneScanner(fs, N, toneSearch) : null;
  const tuning = methods.has('tuning') ? new TuningScanner(fs, N) : null;
  let mono = new Float64Array(65536);
  let done = 0;
  for await (const block of source.blocks({ readOnly: true })) {
    aborted();
    if (mono.length < block[0]!.length) mono = new Float64Array(block[0]!.length);
    const m = monoMix(block, mono);
    hum?.push(m);
    tone?.push(m, done);
    tuning?.push(m, done);
    done += m.length;
    ctx.progress(0.5 * (done / N));
  }

  const candidates: SpeedCandidate[] = [];
  // Holders (objects, so TypeScript keeps their types through the loops below).
  const found: { hum?: { m: HumMeasurement; cand: SpeedCandidate }; tone?: { m: ToneMeasurement; cand: SpeedCandidate } } = {};
  let tuningM: TuningMeasurement | null = null;
  const humOf = new Map<SpeedCandidate, HumMeasurement>();

  // Pass 2: hum tracks for the best candidates.
  if (hum) {
    const { candidates: hc, floorAt } = hum.candidates(options.mainsHz);
    if (hc.length > 0) {
      const tracker = new HumTracker(fs, hc.map((candidate) => ({ candidate, floorAt: (hz: number) => floorAt(hz, candidate.quiet) })), hum.quietWeights(), source.channelCount === 2);
      let side = new Float64Array(65536);
      let d2 = 0;
      for await (const block of source.blocks()) {
        aborted();
        if (mono.length < block[0]!.length) mono = new Float64Array(block[0]!.length);
        if (block.length === 2) {
          const n = block[0]!.length;
          if (side.length < n) side = new Float64Array(n);
          const l = block[0]!, r = block[1]!, sd = side.subarray(0, n);
          for (let i = 0; i < n; i++) sd[i] = 0.5 * (l[i]! - r[i]!);
          tracker.push(monoMix(block, mono), sd);
        } else tracker.push(monoMix(block, mono));
        d2 += block[0]!.length;
        ctx.progress(0.5 + 0.4 * (d2 / N));
      }
      const measured = tracker.measure(fs);
      const usable = measured
        .map((m, i) => ({ m, i }))
        .filter((x): x is { m: HumMeasurement; i: number } => x.m !== null)
        // Hum shows its fundamental: a series measured without it is a harmonic of something else.
        .filter((x) => x.m.harmonicsUsed.includes(1))
        .map((x, _, all) => ({ ...x, evidence: humEvidence(x.m) * seriesShown(x.m, all.map((y) => y.m), N / fs), total: x.m.detectionDb + 10 * Math.log10(x.m.harmonicsUsed.length) }))
        .sort((a, b) => Math.min(b.evidence, 0.5) - Math.min(a.evidence, 0.5) || b.total - a.total);
      // A candidate whose strength comes mostly from harmonics of a stronger series that is hum
      // (a sub-multiple such as 100/3 Hz, or 60 Hz beside 100 Hz buzz) is that series seen again:
      // drop it. A series that is not hum itself drops nothing.
      // Quiet weighting multiplies the stream by weights that rise and fall with the programme's
      // bursts, which puts copies of every line at the bursts' rates beside it (amplitude
      // modulation sidebands, common practice): a quiet-weighted series within 5 % of a stronger
      // hum series is that series' sideband, not a second mains frequency.
      const above = (m: HumMeasurement) => m.detectionDb - m.noiseDetectionDb;
      const sideband = (c: (typeof usable)[number], b: (typeof usable)[number]) =>
        c.m.quiet && Math.abs(c.m.meanFundamentalHz / b.m.meanFundamentalHz - 1) <= SIDEBAND_SHARE && above(b.m) > above(c.m);
      const kept: typeof usable = [];
      for (const c of usable) {
        if (!kept.some((b) => b.evidence >= 0.5 && (sharedShare(c.m, b.m, N / fs) >= 0.5 || sideband(c, b)))) kept.push(c);
      }
      // Several steady lines can each look like hum (a pure test tone, an electronic whine): rank
      // them by evidence × the plausibility of the speed they imply, and let the winner keep only
      // its share when another credible line implies a different speed.
      const ranked = kept
        .map((c) => {
          const hyps = humHypotheses(c.m.meanFundamentalHz, options.mainsHz);
          return { ...c, hyps, weight: c.evidence * (hyps[0]?.prior ?? 0) };
        })
        .filter((c) => c.hyps.length > 0)
        .sort((a, b) => b.weight - a.weight || b.total - a.total);
      const credible = ranked.filter((c) => c.evidence >= 0.5);
      const weightSum = credible.reduce((s, c) => s + c.weight, 0);
      for (const [rank, { m, evidence, hyps, weight }] of ranked.entries()) {
        const lineShare = weightSum > 0 ? Math.min(1, 0.3 + weight / weightSum) : 1;
        const priorSum = hyps.reduce((s, h) => s + h.prior, 0);
        for (const h of hyps) {
          const share = priorSum > 0 ? h.prior / priorSum : 0;
          const cand: SpeedCandidate = {
            method: 'hum',
            factor: m.meanFundamentalHz / h.mainsHz,
            // Unforced mains: both 50 and 60 Hz explain the line; the less plausible speed keeps less.
            // A speed far from 1 that no pair of standard speeds explains is not believed on a
            // line alone (it is more likely a harmonic of hum, or a note): capped below 0.5.
            confidence:
              evidence * lineShare * (options.mainsHz ? 1 : Math.min(1, 0.3 + share)) *
              (plausibleFactor(m.meanFundamentalHz / h.mainsHz) ? 1 : 0.45),
            mainsHz: h.mainsHz,
            observedHz: m.meanFundamentalHz,
            uncertaintyPercent: (100 * m.uncertaintyHz) / m.meanFundamentalHz,
          };
          candidates.push(cand);
          humOf.set(cand, m);
          if (!found.hum && h === hyps[0]) found.hum = { m, cand };
        }
        if (rank === 0 && hyps.length > 1 && evidence >= 0.5) {
          notes.push(
            `hum at ${fmtHz(m.meanFundamentalHz)} Hz fits ${hyps
              .map((h) => `${h.mainsHz} Hz mains at factor ${(m.meanFundamentalHz / h.mainsHz).toFixed(4)}`)
              .join(' or ')}; ${hyps[0]!.mainsHz} Hz was preferred as the more plausible speed (give --mains to decide)`,
          );
        }
        if (rank === 1 && evidence >= 0.5) {
          notes.push(`another steady line at ${fmtHz(m.meanFundamentalHz)} Hz could also be hum (factor ${(m.meanFundamentalHz / hyps[0]!.mainsHz).toFixed(4)} with ${hyps[0]!.mainsHz} Hz mains)`);
        }
      }
    } else if (options.mainsHz) {
      notes.push(`no hum found at ${options.mainsHz} Hz × 0.25–4`);
    }
  }

  // Tone: measure the best run with a ranged read.
  if (tone) {
    const runs = tone.runs();
    const run = runs[0];
    if (run) {
      const refiner = new ToneRefiner(fs, run);
      for await (const block of source.blocks({ startFrame: run.startFrame, endFrame: run.endFrame })) {
        aborted();
        if (mono.length < block[0]!.length) mono = new Float64Array(block[0]!.length);
        refiner.push(monoMix(block, mono));
      }
      const m = refiner.measure();
      if (m) {
        const hyps = toneHypotheses(m.frequencyHz, options.toneHz);
        const priorSum = hyps.reduce((s, h) => s + h.prior, 0);
        const seconds = m.endSeconds - m.startSeconds;
        // A line-up tone is a steady sine, alone, for seconds (REAL-MATERIAL.md): nearly all the
        // power in the one line (a note's harmonics hold much of it), its level held within a dB
        // or so (a note decays), for two seconds or more.
        const detection =
          clamp01((m.tonality - 0.85) / 0.1) * clamp01((seconds - 1) / 1.5) * clamp01((3 - m.levelSpreadDb) / 1.5);
        hyps.forEach((h, j) => {
          const share = priorSum > 0 ? h.prior / priorSum : 0;
          const cand: SpeedCandidate = {
            method: 'tone',
            factor: m.frequencyHz / h.toneHz,
            // Without --tone the nominal frequency is a guess: cap the confidence by its share,
            // and below 0.5 when the speed it implies is not a plausible one.
            confidence: detection * (options.toneHz ? 1 : Math.min(0.95, share) * (plausibleFactor(m.frequencyHz / h.toneHz) ? 1 : 0.45)),
            toneHz: h.toneHz,
            observedHz: m.frequencyHz,
            uncertaintyPercent: (100 * m.uncertaintyHz) / m.frequencyHz,
          };
          if (j < 3) candidates.push(cand);
          if (j === 0) found.tone = { m, cand };
        });
        if (!options.toneHz && hyps.length > 1 && hyps[1]!.prior > 0.25 * hyps[0]!.prior) {
          notes.push(
            `tone at ${fmtHz(m.frequencyHz)} Hz read as a ${hyps[0]!.toneHz} Hz line-up tone; as ${hyps[1]!.toneHz} Hz it would mean factor ${(m.frequencyHz / hyps[1]!.toneHz).toFixed(4)} (give --tone to decide)`,
          );
        }
      }
    } else if (options.toneHz) {
      notes.push(`no steady tone near ${options.toneHz} Hz × 0.25–4 in the first or last minute`);
    }
  }

  if (tuning) {
    tuningM = tuning.result();
    if (tuningM) {
      const c = tuningM.cents;
      const sharp = clamp01((tuningM.concentration - 0.25) / 0.35);
      const edge = 1 - 0.5 * clamp01((Math.abs(c) - 35) / 15);
      candidates.push({
        method: 'tuning',
        factor: Math.pow(2, c / 1200),
        // The tuning only knows the speed modulo a semitone and assumes A = 440 Hz: capped at 0.6.
        confidence: 0.6 * sharp * edge,
        uncertaintyPercent: 100 * (Math.pow(2, tuningM.uncertaintyCents / 1200) - 1),
      });
      if (sharp > 0.3) {
        notes.push(
          `music sits ${c >= 0 ? '+' : ''}${c.toFixed(1)} cents from A = 440 Hz equal temperament; the tuning cannot tell a whole semitone (factor ×${Math.pow(2, 1 / 12).toFixed(4)} or ÷) nor a different reference pitch`,
        );
      }
    }
  }
  ctx.progress(1);

  // The tuning knows the speed only modulo a semitone, but when a hum or tone answer sits on the
  // same fraction of a semitone it corroborates it (independent evidence): combine as
  // 1 − (1 − c)(1 − c_tuning/2) when they agree within 5 cents.
  const tuningCand = candidates.find((c) => c.method === 'tuning');
  if (tuningCand && tuningCand.confidence > 0) {
    for (const c of candidates) {
      if (c.method === 'tuning') continue;
      let d = 1200 * Math.log2(c.factor) - 1200 * Math.log2(tuningCand.factor);
      d -= 100 * Math.round(d / 100);
      if (Math.abs(d) <= 5) c.confidence = 1 - (1 - c.confidence) * (1 - tuningCand.confidence / 2);
    }
  }

  // Hum and tone are independent evidence: when a hum reading and a tone reading agree (within
  // three combined standard uncertainties, or 0.02 %), each corroborates the other.
  const before = candidates.map((c) => c.confidence);
  candidates.forEach((c) => {
    if (c.method === 'tuning') return;
    for (const [j, o] of candidates.entries()) {
      if (o.method === 'tuning' || o.method === c.method) continue;
      const u = Math.hypot(c.uncertaintyPercent ?? 0, o.uncertaintyPercent ?? 0);
      if (Math.abs(c.factor / o.factor - 1) * 100 <= Math.max(3 * u, 0.02)) {
        c.confidence = 1 - (1 - c.confidence) * (1 - before[j]! / 2);
      }
    }
  });

  // Choose: the most confident candidate; a method forced by --mains / --tone wins when credible.
  const ranked = [...candidates].sort(
    (a, b) => b.confidence - a.confidence || (a.uncertaintyPercent ?? 1) - (b.uncertaintyPercent ?? 1),
  );
  // Musical tuning alone is weak evidence of speed (the music may be tuned to another pitch, and
  // a whole semitone cannot be told): it corroborates hum or a tone but is never the answer.
  let best = ranked.find((c) => c.method !== 'tuning');
  if (options.mainsHz && found.hum && found.hum.cand.confidence >= 0.5) best = found.hum.cand;
  else if (options.toneHz && found.tone && found.tone.cand.confidence >= 0.5) best = found.tone.cand;
  const hb = best && humOf.get(best) ? { m: humOf.get(best)!, cand: best } : found.hum ?? null;
  const tb = found.tone ?? null;

  const base: Omit<SpeedResult, 'factor' | 'cents' | 'method' | 'confidence' | 'uncertaintyPercent' | 'standardPair' | 'curve'> = {
    candidates: candidates.map((c) => ({ ...c, confidence: round(c.confidence, 3) })),
    mainsHz: null,
    humHz: hb ? hb.m.meanFundamentalHz : null,
    toneHz: null,
    toneInFileHz: tb ? tb.m.frequencyHz : null,
    tuningCents: tuningM ? (tuningM as TuningMeasurement).cents : null,
    notes,
  };
  if (!best || best.confidence < 0.5) {
    notes.push(notDeterminedReason(candidates, tuningCand, hb?.m ?? null));
    return {
      ...base,
      factor: 1,
      cents: 0,
      method: null,
      confidence: round(best?.confidence ?? 0, 3),
      uncertaintyPercent: null,
      standardPair: null,
      curve: { timesSeconds: [], factors: [] },
    };
  }
  let curve: { timesSeconds: number[]; factors: number[] } = { timesSeconds: [], factors: [] };
  if (best.method === 'hum' && hb) {
    const m = hb.m;
    curve = extendToEdges({ timesSeconds: m.timesSeconds, factors: m.fundamentalsHz.map((f) => f / best!.mainsHz!) }, N / fs);
  } else if (best.method === 'tone' && tb) {
    curve = { timesSeconds: tb.m.timesSeconds, factors: tb.m.frequenciesHz.map((f) => f / best!.toneHz!) };
  }
  return {
    ...base,
    factor: best.factor,
    cents: 1200 * Math.log2(best.factor),
    method: best.method,
    confidence: round(best.confidence, 3),
    uncertaintyPercent: best.uncertaintyPercent ?? null,
    standardPair: standardPairText(best.factor),
    curve,
    mainsHz: best.method === 'hum' ? best.mainsHz ?? null : null,
    toneHz: best.method === 'tone' ? best.toneHz ?? null : null,
  };
}

/**
 * The hum curve's windows are centred from about 2 s after the start to 2 s before the end; a
 * correction that held the end values would leave the drift in the first and last seconds. Carry
 * the measured trend to the edges: a straight line through the first (last) five points, read at
 * 0 s (at the end).
 */
function extendToEdges(c: { timesSeconds: number[]; factors: number[] }, durationSeconds: number): { timesSeconds: number[]; factors: number[] } {
  const n = c.timesSeconds.length;
  if (n < 2) return c;
  const lineAt = (from: number, to: number, t: number) => {
    let st = 0, sy = 0;
    for (let i = from; i < to; i++) {
      st += c.timesSeconds[i]!;
      sy += c.factors[i]!;
    }
    const k = to - from, tm = st / k, ym = sy / k;
    let sxy = 0, sxx = 0;
    for (let i = from; i < to; i++) {
      sxy += (c.timesSeconds[i]! - tm) * (c.factors[i]! - ym);
      sxx += (c.timesSeconds[i]! - tm) ** 2;
    }
    return sxx > 0 ? ym + (sxy / sxx) * (t - tm) : ym;
  };
  const k = Math.min(5, n);
  const times = [...c.timesSeconds], factors = [...c.factors];
  if (times[0]! > 0) {
    times.unshift(0);
    factors.unshift(lineAt(0, k, 0));
  }
  if (times[times.length - 1]! < durationSeconds) {
    times.push(durationSeconds);
    factors.push(lineAt(n - k, n, durationSeconds));
  }
  return { timesSeconds: times, factors };
}

/** Why the speed is not determined, in one sentence (the finding says it). */
function notDeterminedReason(candidates: SpeedCandidate[], tuning: SpeedCandidate | undefined, hum: HumMeasurement | null): string {
  const line = candidates.filter((c) => c.method !== 'tuning').sort((a, b) => b.confidence - a.confidence)[0];
  if (line && line.confidence >= 0.2 && line.observedHz !== undefined && !(tuning && tuning.confidence >= 0.3 && tuning.confidence >= line.confidence)) {
    const what = line.method === 'hum' ? 'could be mains hum' : 'could be a line-up tone';
    const why =
      !plausibleFactor(line.factor)
        ? `it would mean a speed factor of ${line.factor.toFixed(4)}, which no pair of standard speeds explains`
        : line.method === 'hum' && hum && persistenceEvidence(hum.harmonicsUsed, hum.persistence) < 0.5
          ? 'it does not hold one level through the file (it comes and goes with the playing, as a note does)'
          : line.method === 'tone'
            ? 'it is not a steady sine, alone, for seconds'
            : 'the evidence for it is weak';
    return `a line at ${fmtHz(line.observedHz)} Hz ${what}, but ${why}; the speed is not determined`;
  }
  if (tuning && tuning.confidence >= 0.3) {
    return `only the tuning of the music gives a reading (${(1200 * Math.log2(tuning.factor)).toFixed(1)} cents from A = 440 Hz), and tuning alone is weak evidence of speed (the music may be tuned to another pitch, and a whole semitone cannot be told); the speed is not determined`;
  }
  return 'no mains hum, reference tone or musical tuning gave evidence strong enough to measure the playing speed; the speed is not determined';
}

const round = (v: number, digits: number) => Math.round(v * 10 ** digits) / 10 ** digits;
