/**
 * Reversed-channel detection: does a channel play backwards? Evidence from how sounds start and stop.
 *
 * Natural sounds start quickly and die away slowly: a struck, plucked or spoken sound reaches its
 * peak in milliseconds and decays over tens or hundreds of milliseconds (free vibration decays
 * exponentially, a straight line in dB; e.g. Fletcher & Rossing, The Physics of Musical
 * Instruments, 2nd ed., §2–3). Played backwards the same material swells into hard stops. But some
 * forward programme has slow attacks and quick releases (winds, bowed strings, organ, pads, a
 * fade-in then a cut), and sustained notes between hard edges say nothing about direction. So the
 * detector weighs several cues from one compact summary and says "not determined" (`likely: null`)
 * when they are thin or disagree.
 *
 * Summary (streamed, one pass): per channel the mean power of consecutive 10 ms blocks (100 values
 * per second). From it, in dB, floored 60 dB below a robust peak (the 99th percentile of blocks):
 *
 *  1. the step skew A: the steps d = L[i+1] − L[i] between neighbouring blocks where either block is
 *     within 35 dB of the peak; S = (Σ d₋³ − Σ d₊³)/(Σ d₊³ + Σ d₋³) ∈ [−1, 1] (big steps count
 *     most): near −1 when abrupt steps are rises, near +1 when they are falls;
 *  2. hard edges: level changes of at least 15 dB within 20 ms whose loud side is within 30 dB of
 *     the peak (one per edge), counted as hard starts and hard stops;
 *  3. the agreement of the skew over independent stretches: S computed in 1 s segments, and the
 *     t statistic of those segment scores (t ≥ 1.5 means the stretches agree);
 *  4. the context of each hard edge, on a 50 ms smoothed envelope: a hard stop that ends a steady
 *     swell (≥ 6 dB over ≥ 0.3 s, never louder than the stop) is a free decay played backwards; a
 *     hard start followed by a steady decay is the same forwards. "Steady": the mean levels of the
 *     ramp's fifths, from the edge away, fall by ≥ 8 % of its dB in each of the first two steps and
 *     never climb back by more than 1 dB, and the nearer half carries at least 35 % of the fall (not
 *     concave in dB); it ends where the level grows again by 6 dB (another sound), or where it falls
 *     by 12 dB within 50 ms (the note's own end: a damper or a release, which is not the decay). A hard stop after a plateau (a wind or organ note being
 *     released) or a linear fade-in read back from its cut (concave in dB) is neither. A ramp ends
 *     where the sound does, 50 dB below the peak.
 *  5. the band cue (dsp/reverse/bands.ts): the same skew of level changes measured in half-octave
 *     bands (Sb), each band's own skew, their median and the share of bands leaning each way. A
 *     chord change or a new note barely moves the broadband level but makes its partials' bands
 *     jump while the old ones fade; played backwards every band fades in and cuts off.
 *
 * Decision (mirrored exactly for "forward"): reversed when S > 0 and one of
 *  - many events: S ≥ 0.3, at least 3 hard stops, stops ≥ 1.25 × starts, and either no hard start
 *    at all or segment agreement t ≥ 1.5 (speech has hard stops too: then the stretches must agree);
 *    counted without gated notes — a hard start and the next hard stop with the level held between
 *    them (a wind or organ note, a tone burst) start and stop abruptly either way round — paired
 *    over quiet edges too (the same change with its loud side 30–45 dB below the peak), and with
 *    the quiet abrupt starts left unpaired counted against the stops: a fade-in brings the first
 *    notes' starts below the hard edges' level while their stops, later and louder, still count
 *    (forward clarinet and speech excerpts faded in were read as "many events" that way);
 *  - swells into stops: S ≥ 0.3, at least two swells into hard stops, no decay after a start and
 *    no more hard starts than stops (reversed struck or plucked notes, or notes that were damped:
 *    each damper release became a hard start followed by a swell);
 *  - one note played backwards ('one-note'): S ≥ 0.3, one swell into a hard stop (at most one
 *    hard start, no decay after a start) whose bands move as a free decay's do (the band tests
 *    under "a fade is not a decay" below) and whose stop carries the note's attack (bands.ts
 *    attackAtEdge: the top third of the bands ≥ 4 dB above their swell's line carried to the
 *    stop, and ≥ 4 dB more than the bottom third). A struck or plucked note's upper bands decay
 *    in two stages, so at the attack they stand above the line of the slower decay; a gain adds
 *    the same dB to every band (it cancels from the difference), a fade-in is straight or concave
 *    in dB (it never ends above its line), and a forward excerpt is cut wherever its programme
 *    was, not at an attack. Mirrored: one decay after a hard start with the attack at the start
 *    reads as forward. Measured (test/reverse/fade-stress.ts): no forward excerpt faded in and cut
 *    off is called reversed (dev 0/13,320, holdout 0/2,040; the 4 forward excerpts whose one swell
 *    passed the band tests had top-third excesses of −6.6 … 0 dB, tilts ≤ 1.8 dB), backwards found
 *    dev 2,985 → 3,018, holdout 472 → 498, none called forward; on the corpus the reversed piano A0
 *    and C1, a taiko, a melodic tom and TimGM bells (top thirds 4.4–10.9 dB, tilts 4.8–11.2 dB)
 *    are found, none read as forward, no forward channel called reversed;
 *  - otherwise one swell never decides ('one-ramp', not determined): one swell into a hard stop (or one decay
 *    after a hard start), however long and whatever its bands, is one sound only. Measured
 *    (test/reverse/fade-stress.ts, holdout): a forward TimGM string excerpt faded in and cut off
 *    had a swell into the cut that passed every band test below and was called reversed; time
 *    reversal maps it onto a reversed excerpt cut in and faded out, one decay after a hard start,
 *    which would be called forward. Without the one-swell rules 0/2,040 holdout forward excerpts
 *    are called reversed (was 1), and the corpus's single reversed notes (low piano A0, C1, a held
 *    bass, a taiko and a tom hit) are not determined (dev found 54/79 → 49/79);
 *  - a fade is not a decay: the rule above that rests on ramps needs each ramp it counts to look like a free decay in its
 *    frequency bands: the bands move apart (bands.ts bandHeterogeneity ≥ 10), the high bands
 *    rise fastest into a stop (bandRateTilt: rank correlation of band rate with frequency ≥ 0.5;
 *    a free decay loses its high partials first) and the top third of the bands rises at least
 *    half the mean rate faster than the bottom third. A fade applied as a gain moves every band
 *    together whatever its curve, and one linear in dB has exactly the broadband shape of a free
 *    decay read backwards; a gain adds the same rate to every band and so leaves the order of the
 *    rates to the material — a forward struck note decaying under a fade-in has its high bands
 *    rising slowest. A ramp that fails leaves the direction not determined ('fade-like'), and so
 *    do sampled notes whose decay is a volume envelope — their reversal is, sample for sample, a
 *    fade-in ending in a cut. Measured (test/reverse/fade-stress.ts): with only the band spread,
 *    forward excerpts faded in and cut off were called reversed 179 times in 13,320 channels;
 *    sustained choir, strings and trombone under a fade still reach a rank correlation of
 *    0.51–0.78 with a spread of 6.6–7.8 (choir, trombone) or a spread of 17 with the thirds 0.43
 *    of the mean rate apart (strings), which the thresholds above leave out; the corpus's reversed
 *    low piano notes A0 and C1 had 0.59 and 0.52, spreads 86 and 51, thirds 0.71 and 0.55 apart
 *    (one swell each: not determined, see above);
 *  - the bands agree (when none of the above decided): S ≥ 0.3, at least 3 hard stops and more
 *    stops than starts (both outside gated notes), Sb ≥ 0.45, the median of the bands' own skews ≥ 0.5 and at least 90 % of
 *    at least 3 bands leaning the same way (reversed strummed chords and brass chords whose few
 *    hard starts keep the event rule from deciding). On the corpus the largest such median of a
 *    forward channel was 0.35 (clarinet chords); a forward channel with one sound with a hard
 *    edge (a line-up tone stopping before a slow pad) reaches Sb 0.55 but leans the other way in
 *    half of its bands. The hard-stop count is needed: without it the band cue also calls
 *    reversed a forward excerpt faded in and cut off (every band fades in and cuts off once),
 *    which is what a reversed held note or a reversed legato chord sequence with a single cut
 *    looks like too — those stay "not determined".
 *  - staggered edges (when none of the above decided): S ≥ 0.3, no hard start, at least 2 hard stops
 *    staggered across the bands (bands.ts edgeStagger: in the 40–120 ms before the stop 3 or more
 *    bands, a quarter of those sounding, fall away by 12 dB while 2 or more hold) and the band skew
 *    agreeing (Sb ≥ 0.45, ≥ 90 % of ≥ 3 bands). A natural attack reaches its partials at different
 *    moments (an organ's low partials speak late); a gain, a gate or an editor's cut moves every
 *    band at once. Reversed held organ notes: each a swell from silence (the release, a gain), the
 *    note, and the attack read backwards. On the corpus no forward channel without hard starts had
 *    two staggered stops, and no excerpt faded in and cut off (1323 channels) was decided by this
 *    rule; one cut alone, staggered or not, stays not determined (the cut of a faded-in cello or
 *    violin melody excerpt is staggered when the excerpt ends just after a note change);
 *  - one channel the mirror of another (decideMirroredPairs, after the channels were judged): see there.
 * Otherwise not determined. Sustained sampled notes and chords played backwards (organ, bowed
 * strings, choir, brass, pads: one swell from silence, the held sound, one cut) stay not
 * determined: measured on the corpus, the held part between the fade and the cut is the same
 * either way round (on the missed clips the 30 ms band skew, 100 ms band rates and 50 ms per-bin
 * level jumps, away from the fade and the cut, are within ±0.25 of zero and as often lean the
 * wrong way as the right one), and the order in which the bands
 * arrive over the swell, or their decay rates over a release, lean different ways on different
 * instruments; what is left is one fade and one cut. A forward clarinet (swell 50 ms, plateau, cut; as many hard starts as
 * stops) is not determined in either direction, and so is a reversed one.
 *
 * Antisymmetry: time reversal maps every step d to −d and every hard start to a hard stop with the
 * mirrored context, so S(reversed) = −S(forward) exactly for a block-aligned envelope, and the
 * decision rules mirror each other (up to the alignment of the 1 s segments).
 *
 * The reported `score` is S when the direction is determined, and S/4 when it is not (so that
 * |score| ≥ 0.3 only ever accompanies a determined direction).
 */
import { powerToDb } from '../units.ts';
import type { AudioSource } from '../source.ts';
import { reclaim } from '../core/reclaim.ts';
import { REVERSED_MIN_ACTIVE_SECONDS, REVERSED_SCORE_THRESHOLD } from './limits.ts';
import { BandEnvelopes, attackAtEdge, bandAsymmetry, bandDb, bandHeterogeneity, bandRateTilt, edgeStagger, segmentAgreement, type BandAsymmetry, type BandDb } from './bands.ts';

export interface ReversedChannel {
  /** 1-based channel number. */
  readonly channel: number;
  /** true: plays backwards; false: plays forwards; null: not determined (evidence too thin). */
  readonly likely: boolean | null;
  /** −1 … +1: positive when the channel swells and stops abruptly (plays backwards). */
  readonly score: number;
  /** The step skew S itself, whether or not the direction is determined. (The fields from here on are
   * always filled by `detectReversedChannels`; optional so that older summaries still type-check.) */
  readonly skew?: number;
  /** Seconds of material loud enough to judge. */
  readonly activeSeconds: number;
  /** Hard edges: level rises and falls of at least 15 dB within 20 ms. */
  readonly abruptStarts: number;
  readonly abruptStops: number;
  /** Swells into hard stops (free decays backwards) and decays after hard starts (forwards). */
  readonly swellsIntoStops?: number;
  /** Hard edges staggered across the bands (bands.ts edgeStagger), as a natural attack is, and played backwards. */
  readonly staggeredStarts?: number;
  readonly staggeredStops?: number;
  /** Gated notes (a hard start and a hard stop with the level held between), left out of the counts. */
  readonly gatedNotes?: number;
  readonly decaysAfterStarts?: number;
  /** Agreement of the 1 s segment scores (t statistic; 0 when fewer than 3 segments). */
  readonly segmentAgreement?: number;
  /** The band cue: skew of the level changes in half-octave bands, and the median of the bands' own skews. */
  readonly bandSkew?: number;
  readonly bandMedian?: number;
  /** Bands scored, and the share of them leaning towards the reported direction (towards reversed when not determined). */
  readonly bands?: number;
  readonly bandsAgreeing?: number;
  /** For the ramps weighed (swells into stops, decays after starts): how far
   * its frequency bands move apart (bands.ts bandHeterogeneity; about 1 for a fade, which moves every
   * band together). Absent when no such ramp was weighed. */
  readonly rampBandSpread?: number;
  /** For the same ramps: Spearman correlation of the bands' rates with their frequencies (bands.ts
   * bandRateTilt; the largest in size): near +1 when the high bands rise fastest into a stop, as a
   * free decay played backwards does, near −1 when they fall fastest after a start. */
  readonly rampBandTilt?: number;
  /** …and the rates of the top third of the bands less the bottom third's, over the mean rate (bands.ts bandRateTilt; the largest in size). */
  readonly rampRelativeSpread?: number;
  /** For the ramps whose edge was read for an attack (bands.ts attackAtEdge; the one with the largest tilt): the top
   * third of the bands' excess over the ramp's line at the edge, and that less the bottom third's, in dB. */
  readonly edgeAttackDb?: number;
  readonly edgeAttackTiltDb?: number;
  /** Which rule decided, or why nothing did. */
  readonly basis?: ReversedBasis;
  /** For basis 'mirrors-channel': the 1-based channel whose level envelope this one's mirrors in time. */
  readonly mirrorOf?: number;
  /** Calibrated on the real-material corpus; 0 when not determined. */
  readonly confidence?: number;
}

export type ReversedBasis = 'many-events' | 'ramps-at-edges' | 'one-note' | 'one-ramp' | 'bands-agree' | 'staggered-edges' | 'mirrors-channel' | 'too-little-sound' | 'no-hard-edges' | 'cues-disagree' | 'fade-like' | 'thin';

export interface ReversedResult {
  readonly channels: ReversedChannel[];
}

export const REVERSED_BLOCK_SECONDS = 0.01;
export { REVERSED_MIN_ACTIVE_SECONDS, REVERSED_SCORE_THRESHOLD } from './limits.ts';
const FLOOR_DB = 60;
const ACTIVE_DB = 35;
/** Hard edges: ≥ 15 dB within 2 blocks (20 ms), loud side within 30 dB of the peak. */
const EDGE_DB = 15;
const EDGE_LOUD_DB = 30;
/** Quiet edges (the same change, loud side within 45 dB of the peak) only pair gated notes. */
const QUIET_EDGE_LOUD_DB = 45;
/** Context of an edge: up to 4 s, at least 0.3 s, ≥ 6 dB, never 3 dB above the edge's loud side. */
const RAMP_MAX_BLOCKS = 400;
const RAMP_MIN_BLOCKS = 30;
const RAMP_MIN_DB = 6;
const SEGMENT_BLOCKS = 100;
const RAMP_END_DB = -FLOOR_DB + 10;
const GATED_DIP_DB = 10;
const RAMP_REGROW_DB = 6;
/** A ramp stops at the note's own end: a fall of RELEASE_DB within RELEASE_BLOCKS. */
const RELEASE_BLOCKS = 5;
const RELEASE_DB = 12;
/**
 * A ramp counted as a free decay needs its bands to move apart by at least this much (Q/(m − 1)
 * of bands.ts bandHeterogeneity). Gain fades (linear in dB, cubic, over 0.5–3 s) on steady partials,
 * noise and partials with vibrato and tremolo gave at most 4.4; free decays of the corpus's struck
 * and plucked notes mostly 10–90, but a few sampled notes whose decay is a volume envelope (the same
 * in every band) 0.4–4 — those are a fade, and one fade with one cut stays not determined.
 */
const RAMP_BAND_SPREAD = 10;
/** …and its bands' rates ordered by frequency as a free decay's are (bands.ts bandRateTilt, signed towards the direction claimed). */
const RAMP_TILT = 0.5;
/** …with the top and bottom thirds of the bands apart by this share of the mean rate (a fade adds one rate to all). */
const RAMP_RELATIVE_SPREAD = 0.5;
/**
 * One swell decides only when its stop carries a struck or plucked sound's attack (bands.ts
 * attackAtEdge): the top third of the bands at least this many dB above their swell's line carried
 * to the stop, and at least this many dB more than the bottom third.
 */
const ATTACK_HIGH_DB = 4;
const ATTACK_TILT_DB = 4;
/** Mirrored channels (decideMirroredPairs): correlation against the other played backwards, margin over forwards, lags tried, band skew. */
const MIRROR_MIN_CORRELATION = 0.85;
const MIRROR_MIN_MARGIN = 0.5;
const MIRROR_LAG_BLOCKS = 2;
const MIRROR_BAND_SKEW = 0.45;
const MIRROR_MAX_PAIRS = 16;

/**
 * Per-channel block power envelope, grown as the source streams past. Sized for the source's
 * length up front (4 bytes per 10 ms block), so a long many-channel file costs no more than that.
 */
class Envelope {
  #values: Float32Array;
  length = 0;
  #acc = 0;
  #count = 0;
  constructor(
    readonly blockFrames: number,
    expectedBlocks: number,
  ) {
    this.#values = new Float32Array(Math.max(16, expectedBlocks));
  }

  add(x: Float64Array): void {
    const b = this.blockFrames;
    let acc = this.#acc, count = this.#count;
    for (let i = 0; i < x.length; i++) {
      const v = x[i]!;
      acc += v * v;
      if (++count === b) {
        this.#push(acc / b);
        acc = 0;
        count = 0;
      }
    }
    this.#acc = acc;
    this.#count = count;
  }

  get values(): Float32Array {
    return this.#values.subarray(0, this.length);
  }

  #push(power: number): void {
    if (this.length === this.#values.length) {
      const grown = new Float32Array(this.#values.length * 2);
      grown.set(this.#values);
      this.#values = grown;
    }
    this.#values[this.length++] = power;
  }
}

/** Steps of at least this size (dB per block) count in `largeRises`/`largeFalls`. */
export const LARGE_STEP_DB = 6;

export interface Ramp {
  readonly seconds: number;
  readonly db: number;
  /** The blocks it spans, first ≤ last (whichever end the edge is at). */
  readonly first: number;
  readonly last: number;
}

export interface Asymmetry {
  /** S (see the module comment): positive when the envelope swells and stops abruptly. */
  readonly score: number;
  readonly activeBlocks: number;
  /** Rising and falling steps of at least LARGE_STEP_DB among the active ones. */
  readonly largeRises: number;
  readonly largeFalls: number;
  /** Hard edges (≥ 15 dB within 20 ms). */
  readonly hardStarts: number;
  readonly hardStops: number;
  /** Hard starts and stops that are not the two ends of a gated note, and the gated notes. */
  readonly openStarts: number;
  readonly openStops: number;
  readonly gatedNotes: number;
  /** Abrupt starts and stops too quiet to be hard edges (loud side 30–45 dB below the peak), not in gated notes. */
  readonly quietStarts: number;
  readonly quietStops: number;
  /** Swells into hard stops, and decays after hard starts. */
  readonly swells: readonly Ramp[];
  readonly decays: readonly Ramp[];
  /** t statistic of the 1 s segment scores (0 when fewer than 3 segments). */
  readonly segmentT: number;
  /** The hard edges themselves: block `at` (the edge spans blocks at … at + 2) and whether it is a start. */
  readonly edges: readonly { readonly at: number; readonly up: boolean }[];
}

function skewOf(db: Float64Array, from: number, to: number, active: number): { up: number; down: number; n: number; rises: number; falls: number } {
  let up = 0, down = 0, n = 0, rises = 0, falls = 0;
  for (let i = from; i < to; i++) {
    const a = db[i]!, b = db[i + 1]!;
    if (Math.max(a, b) < active) continue;
    n++;
    const d = b - a;
    if (d > 0) up += d * d * d;
    else down -= d * d * d;
    if (d >= LARGE_STEP_DB) rises++;
    else if (d <= -LARGE_STEP_DB) falls++;
  }
  return { up, down, n, rises, falls };
}

/**
 * From the loud side of an edge at block j, walk away from the edge (dir −1 before a stop, +1 after
 * a start) over at most `limit` blocks of the smoothed envelope: a steady ramp or null.
 */
function ramp(smooth: Float64Array, j: number, dir: 1 | -1, limit: number): Ramp | null {
  if (limit < RAMP_MIN_BLOCKS || j < 0 || j >= smooth.length) return null;
  const top = smooth[j]!;
  let last = j, count = 0, lowest = top;
  for (let k = 0; k <= limit; k++) {
    const p = j + dir * k;
    if (p < 0 || p >= smooth.length) break;
    if (smooth[p]! > top + 3) return null;
    // The ramp ends where the sound does (10 dB above the floor), or where the level grows again
    // (another sound: a free decay read from its loud end only falls).
    if (smooth[p]! <= RAMP_END_DB || smooth[p]! > lowest + RAMP_REGROW_DB) break;
    // … or where the note itself ends: a fall of 12 dB within 50 ms (a damper or a release,
    // far faster than the decay being followed) is not part of the ramp.
    if (k >= RELEASE_BLOCKS && smooth[p - dir * RELEASE_BLOCKS]! - smooth[p]! >= RELEASE_DB) break;
    lowest = Math.min(lowest, smooth[p]!);
    last = p;
    count++;
  }
  if (count < RAMP_MIN_BLOCKS) return null;
  const total = top - smooth[last]!;
  if (total < RAMP_MIN_DB) return null;
  // A free decay falls steadily: the mean levels of the ramp's five fifths (from the edge away)
  // fall by at least 8 % of its dB in each of the first two steps and do not rise again by more
  // than 1 dB. A plateau that ends in a cut (a wind note released), or a linear fade-in read back
  // from its cut (concave in dB), is no ramp.
  const fifth = Math.floor(count / 5);
  const means: number[] = [];
  for (let q = 0; q < 5; q++) {
    let m = 0;
    for (let k = q * fifth; k < (q + 1) * fifth; k++) m += smooth[j + dir * k]!;
    means.push(m / fifth);
  }
  const drop = (q: number) => means[q]! - means[q + 1]!;
  if (drop(0) < 0.08 * total || drop(1) < 0.08 * total || drop(2) < -1 || drop(3) < -1) return null;
  // Not concave in dB: the nearer half carries at least 35 % of the fall (a straight line in dB
  // carries half, a two-stage decay more, a linear-amplitude fade read back from its cut about a quarter).
  if (means[0]! - means[2]! < 0.35 * (means[0]! - means[4]!)) return null;
  return { seconds: count * REVERSED_BLOCK_SECONDS, db: total, first: Math.min(j, last), last: Math.max(j, last) };
}

/** Every cue of one block-power envelope (see the module comment). */
export function asymmetryScore(power: Float32Array): Asymmetry {
  const n = power.length;
  const none = { score: 0, activeBlocks: 0, largeRises: 0, largeFalls: 0, hardStarts: 0, hardStops: 0, openStarts: 0, openStops: 0, quietStarts: 0, quietStops: 0, gatedNotes: 0, swells: [], decays: [], segmentT: 0, edges: [] };
  if (n < 2) return none;
  const db = new Float64Array(n);
  for (let i = 0; i < n; i++) db[i] = powerToDb(power[i]! + 1e-30);
  const sorted = Float64Array.from(db).sort();
  const peak = sorted[Math.min(n - 1, Math.floor(0.99 * (n - 1)))]!;
  // Relative to the peak, floored: silences give no infinite steps.
  for (let i = 0; i < n; i++) db[i] = Math.max(db[i]! - peak, -FLOOR_DB);
  const all = skewOf(db, 0, n - 1, -ACTIVE_DB);
  const total = all.up + all.down;
  const score = total > 0 ? (all.down - all.up) / total : 0;

  // Agreement over 1 s segments (steps centred in the file so that reversal mirrors them as nearly as possible).
  const { t: segmentT } = segmentAgreement(n - 1, SEGMENT_BLOCKS, (a, b) => skewOf(db, a, b, -ACTIVE_DB));

  // Hard edges over 20 ms, one per edge (the largest change among its neighbours).
  const d2 = new Float64Array(Math.max(0, n - 2));
  for (let i = 0; i < d2.length; i++) d2[i] = db[i + 2]! - db[i]!;
  // Quiet edges too (loud side within 45 dB of the peak): they pair gated notes (below) whose one
  // edge a fade-in has brought below the hard edges' 30 dB.
  const edges: { at: number; up: boolean }[] = [], quietEdges: { at: number; up: boolean; hard: boolean }[] = [];
  for (let i = 0; i < d2.length; i++) {
    const v = d2[i]!;
    if (Math.abs(v) < EDGE_DB || Math.max(db[i]!, db[i + 2]!) < -QUIET_EDGE_LOUD_DB) continue;
    let keep = true;
    for (let k = Math.max(0, i - 2); k < Math.min(d2.length, i + 3) && keep; k++) keep = v > 0 ? v >= d2[k]! : v <= d2[k]!;
    if (!keep) continue;
    const hard = Math.max(db[i]!, db[i + 2]!) >= -EDGE_LOUD_DB;
    quietEdges.push({ at: i, up: v > 0, hard });
    if (hard) edges.push({ at: i, up: v > 0 });
  }

  // Context of each edge on a 50 ms smoothed envelope (centred, so reversal mirrors it).
  const smooth = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let p = 0;
    for (let k = i - 2; k <= i + 2; k++) if (k >= 0 && k < n) p += 10 ** (db[k]! / 10);
    smooth[i] = powerToDb(p / 5 + 1e-30);
  }
  // Gated notes: a hard start and the next hard stop with the level held in between (never 10 dB
  // below the quieter edge). A wind or organ note, or a tone burst, starts and stops abruptly
  // either way round: such pairs are left out of the event counts of the decision.
  // Paired over the quiet edges as well as the hard ones: a note of a faded-in passage whose start
  // lies below the hard edges' level is still a note that starts and stops abruptly. Counted among
  // the gated notes when at least one of its edges is hard.
  const paired = new Uint8Array(quietEdges.length);
  let gatedNotes = 0;
  for (let e = 0; e + 1 < quietEdges.length; e++) {
    const s0 = quietEdges[e]!, s1 = quietEdges[e + 1]!;
    if (!s0.up || s1.up || paired[e]) continue;
    const lo = Math.min(smooth[s0.at + 2]!, smooth[s1.at]!) - GATED_DIP_DB;
    let held = true;
    for (let k = s0.at + 2; k <= s1.at && held; k++) held = smooth[k]! >= lo;
    if (held) {
      paired[e] = paired[e + 1] = 1;
      if (s0.hard || s1.hard) gatedNotes++;
    }
  }
  let openStarts = 0, openStops = 0;
  let quietStarts = 0, quietStops = 0;
  for (let e = 0; e < quietEdges.length; e++) {
    if (paired[e]) continue;
    const q = quietEdges[e]!;
    if (q.hard) q.up ? openStarts++ : openStops++;
    else q.up ? quietStarts++ : quietStops++;
  }
  const swells: Ramp[] = [], decays: Ramp[] = [];
  let hardStarts = 0, hardStops = 0;
  for (let e = 0; e < edges.length; e++) {
    const { at, up } = edges[e]!;
    if (up) {
      hardStarts++;
      const next = e + 1 < edges.length ? edges[e + 1]!.at : n;
      const j = at + 4;
      const r = ramp(smooth, j, 1, Math.min(RAMP_MAX_BLOCKS, next - j - 2));
      if (r) decays.push(r);
    } else {
      hardStops++;
      const prev = e > 0 ? edges[e - 1]!.at + 2 : -1;
      const j = at - 2;
      const r = ramp(smooth, j, -1, Math.min(RAMP_MAX_BLOCKS, j - prev - 2));
      if (r) swells.push(r);
    }
  }
  return { score, activeBlocks: all.n, largeRises: all.rises, largeFalls: all.falls, hardStarts, hardStops, openStarts, openStops, quietStarts, quietStops, gatedNotes, swells, decays, segmentT, edges };
}

export interface Verdict {
  readonly likely: boolean | null;
  readonly basis: ReversedBasis;
  readonly confidence: number;
}

/** The rules for "the abrupt edges are stops" (reversed); called mirrored for "forward". `moves`
 * says whether a ramp's bands move apart (not a fade); it decides the rule that rests on ramps. */
function stopsWin(
  s: number, t: number, stops: number, starts: number, openStops: number, openStarts: number, swells: readonly Ramp[], decays: readonly Ramp[],
  moves: (r: Ramp) => boolean = () => true, quietStarts = 0, attacked: (r: Ramp) => boolean = () => false,
): { basis: ReversedBasis; confidence: number } | { fadeLike: true } | { oneRamp: true } | null {
  if (s <= 0) return null;
  // Abrupt starts a fade-in has brought below the hard edges' level count against the stops too.
  const against = openStarts + quietStarts;
  if (s >= REVERSED_SCORE_THRESHOLD && openStops >= 3 && openStops >= 1.25 * against && (against === 0 || t >= 1.5)) {
    // Calibrated on the corpus: no false call at any count; fewer events, less confidence.
    return { basis: 'many-events', confidence: openStops >= 8 && (against === 0 || t >= 3) ? 0.95 : 0.8 };
  }
  // Two or more swells into stops, each moving its bands apart as a free decay does: independent
  // sounds agree. A swell that moves every band together is a fade, not a decay.
  if (s >= REVERSED_SCORE_THRESHOLD && swells.length >= 2 && decays.length === 0 && stops >= starts) {
    if (swells.filter(moves).length >= 2) return { basis: 'ramps-at-edges', confidence: 0.8 };
    return { fadeLike: true };
  }
  // One swell decides only as a whole note played backwards: a free decay in its bands that ends
  // in the note's attack (see the module comment, "one swell"); else one sound with one cut.
  if (s > 0 && starts <= 1 && stops >= Math.max(1, starts) && decays.length === 0 && swells.length >= 1) {
    if (s >= REVERSED_SCORE_THRESHOLD && swells.length === 1 && moves(swells[0]!) && attacked(swells[0]!)) return { basis: 'one-note', confidence: 0.7 };
    return swells.some(moves) ? { oneRamp: true } : { fadeLike: true };
  }
  return null;
}

/** The band rule for "reversed" (see the module comment); called mirrored for "forward". */
function bandsWin(s: number, bandSkew: number, bandMedian: number, share: number, bands: number, stops: number, starts: number): boolean {
  return s >= REVERSED_SCORE_THRESHOLD && stops >= 3 && stops > starts && bandSkew >= 0.45 && bandMedian >= 0.5 && bands >= 3 && share >= 0.9;
}

/** The staggered-edge rule for "reversed" (see the module comment); called mirrored for "forward". */
function staggerWin(s: number, bandSkew: number, share: number, bands: number, staggeredStops: number, starts: number): boolean {
  return s >= REVERSED_SCORE_THRESHOLD && starts === 0 && staggeredStops >= 2 && bandSkew >= 0.45 && bands >= 3 && share >= 0.9;
}

/** The decision for one channel from its cues (see the module comment). */
export function judgeDirection(a: Asymmetry, activeSeconds: number, b?: BandAsymmetry, moves?: (r: Ramp) => boolean, staggered?: { starts: number; stops: number }, attacked?: (r: Ramp) => boolean): Verdict {
  if (activeSeconds < REVERSED_MIN_ACTIVE_SECONDS) return { likely: null, basis: 'too-little-sound', confidence: 0 };
  const back = stopsWin(a.score, a.segmentT, a.hardStops, a.hardStarts, a.openStops, a.openStarts, a.swells, a.decays, moves, a.quietStarts, attacked);
  if (back && 'basis' in back) return { likely: true, ...back };
  const fwd = stopsWin(-a.score, -a.segmentT, a.hardStarts, a.hardStops, a.openStarts, a.openStops, a.decays, a.swells, moves, a.quietStops, attacked);
  if (fwd && 'basis' in fwd) return { likely: false, ...fwd };
  if (b && bandsWin(a.score, b.score, b.bandMedian, b.positiveShare, b.bands, a.openStops, a.openStarts)) return { likely: true, basis: 'bands-agree', confidence: 0.7 };
  if (b && bandsWin(-a.score, -b.score, -b.bandMedian, b.negativeShare, b.bands, a.openStarts, a.openStops)) return { likely: false, basis: 'bands-agree', confidence: 0.7 };
  if (b && staggered && staggerWin(a.score, b.score, b.positiveShare, b.bands, staggered.stops, a.hardStarts)) return { likely: true, basis: 'staggered-edges', confidence: 0.7 };
  if (b && staggered && staggerWin(-a.score, -b.score, b.negativeShare, b.bands, staggered.starts, a.hardStops)) return { likely: false, basis: 'staggered-edges', confidence: 0.7 };
  const basis: ReversedBasis =
    a.hardStarts + a.hardStops === 0
      ? 'no-hard-edges'
      : (back && 'oneRamp' in back) || (fwd && 'oneRamp' in fwd)
        ? 'one-ramp'
        : back || fwd
          ? 'fade-like'
          : Math.abs(a.score) >= REVERSED_SCORE_THRESHOLD ? 'cues-disagree' : 'thin';
  return { likely: null, basis, confidence: 0 };
}

/**
 * How far the bands move apart over a ramp (bands.ts bandHeterogeneity), over the band frames that
 * lie wholly inside it (frame k ends with block k and spans about blocks k − 3 … k).
 */
function rampBandSpread(bd: BandDb, r: Ramp): number {
  return bandHeterogeneity(bd, r.first + 3, r.last + 1).ratio;
}

/** Band levels of one channel (BandEnvelopes.levels()). */
export interface BandLevels {
  readonly frames: number;
  readonly bands: number;
  readonly power: Float32Array;
}

/**
 * Scores one envelope and decides (the same as each channel of `detectReversedChannels`);
 * `bandLevels` are the channel's band levels (bands.ts), without which the band rule does not apply.
 */
export function judgeEnvelope(
  power: Float32Array,
  blockSeconds = REVERSED_BLOCK_SECONDS,
  bandLevels?: BandLevels,
  /** The band powers may be overwritten (by their levels in dB: bands.ts bandDb). */
  consumeBands = false,
): Omit<ReversedChannel, 'channel'> {
  const a = asymmetryScore(power);
  const activeSeconds = a.activeBlocks * blockSeconds;
  const bd = bandLevels && bandLevels.frames > 0 && bandLevels.bands > 0 ? bandDb(bandLevels.frames, bandLevels.bands, bandLevels.power, consumeBands) : undefined;
  const bands = bandLevels ? bandAsymmetry(bandLevels.frames, bandLevels.bands, bandLevels.power, bd) : undefined;
  // Without band levels the ramps cannot be told from fades: they count as before.
  const spreads = new Map<Ramp, number>();
  const spread = (r: Ramp) => {
    if (!bd) return Infinity;
    let q = spreads.get(r);
    if (q === undefined) spreads.set(r, (q = rampBandSpread(bd, r)));
    return q;
  };
  // The order of the bands' rates: a swell read as a decay backwards needs its high bands rising
  // fastest, a decay its high bands falling fastest (bands.ts bandRateTilt); a fade leaves the
  // order to the material, which a forward decay under a fade-in turns the forward way.
  const swellSet = new Set(a.swells);
  const tilts = new Map<Ramp, { correlation: number; relativeSpread: number }>();
  const tilt = (r: Ramp) => {
    if (!bd) return { correlation: swellSet.has(r) ? 1 : -1, relativeSpread: swellSet.has(r) ? 1 : -1 };
    let q = tilts.get(r);
    if (q === undefined) tilts.set(r, (q = bandRateTilt(bd, r.first + 3, r.last + 1)));
    return q;
  };
  const moves = (r: Ramp) => {
    if (spread(r) < RAMP_BAND_SPREAD) return false;
    const sign = swellSet.has(r) ? 1 : -1, q = tilt(r);
    return sign * q.correlation >= RAMP_TILT && sign * q.relativeSpread >= RAMP_RELATIVE_SPREAD;
  };
  // The attack at the ramp's edge (a stop after a swell, a start before a decay), read against the
  // ramp's own bands (bands.ts attackAtEdge); the edge of a swell is 2 blocks after its last, of a
  // decay 4 before its first (asymmetryScore).
  const attacks = new Map<Ramp, { high: number; tilt: number }>();
  const attack = (r: Ramp) => {
    let q = attacks.get(r);
    if (q === undefined) {
      const up = !swellSet.has(r);
      attacks.set(r, (q = bd ? attackAtEdge(bd, up ? r.first - 4 : r.last + 2, up, r.first, r.last) : { high: 0, tilt: 0 }));
    }
    return q;
  };
  const attacked = (r: Ramp) => bd !== undefined && attack(r).high >= ATTACK_HIGH_DB && attack(r).tilt >= ATTACK_TILT_DB;
  // Hard edges whose bands cross them at different moments, as a natural attack's do.
  let staggeredStarts = 0, staggeredStops = 0;
  if (bd) for (const e of a.edges) if (edgeStagger(bd, e.at, e.up)) e.up ? staggeredStarts++ : staggeredStops++;
  const v = judgeDirection(a, activeSeconds, bands, moves, bd ? { starts: staggeredStarts, stops: staggeredStops } : undefined, attacked);
  const weighed = [...spreads.values()];
  const steepest = [...attacks.values()].reduce<{ high: number; tilt: number } | undefined>((p, q) => (p === undefined || q.tilt > p.tilt ? q : p), undefined);
  return {
    likely: v.likely,
    score: v.likely === null ? a.score / 4 : a.score,
    skew: a.score,
    activeSeconds,
    abruptStarts: a.hardStarts,
    abruptStops: a.hardStops,
    swellsIntoStops: a.swells.length,
    staggeredStarts,
    staggeredStops,
    gatedNotes: a.gatedNotes,
    decaysAfterStarts: a.decays.length,
    segmentAgreement: a.segmentT,
    ...(bands
      ? { bandSkew: bands.score, bandMedian: bands.bandMedian, bands: bands.bands, bandsAgreeing: v.likely === false ? bands.negativeShare : bands.positiveShare }
      : {}),
    ...(weighed.length > 0 ? { rampBandSpread: Math.max(...weighed) } : {}),
    ...(tilts.size > 0 ? { rampBandTilt: [...tilts.values()].map((q) => q.correlation).reduce((p, q) => (Math.abs(q) > Math.abs(p) ? q : p), 0), rampRelativeSpread: [...tilts.values()].map((q) => q.relativeSpread).reduce((p, q) => (Math.abs(q) > Math.abs(p) ? q : p), 0) } : {}),
    ...(steepest ? { edgeAttackDb: steepest.high, edgeAttackTiltDb: steepest.tilt } : {}),
    basis: v.basis,
    confidence: v.confidence,
  };
}

/** Reads the source once and judges every channel. */
export async function detectReversedChannels(source: AudioSource, onProgress?: (fraction: number) => void): Promise<ReversedResult> {
  const blockFrames = Math.max(1, Math.round(REVERSED_BLOCK_SECONDS * source.sampleRateHz));
  const expected = Math.ceil(source.frames / blockFrames) + 1;
  const envs = Array.from({ length: source.channelCount }, () => new Envelope(blockFrames, expected));
  const bandEnvs: Array<BandEnvelopes | null> = Array.from({ length: source.channelCount }, () => new BandEnvelopes(source.sampleRateHz, blockFrames, expected));
  let done = 0;
  for await (const block of source.blocks({ readOnly: true })) {
    for (let c = 0; c < envs.length; c++) {
      envs[c]!.add(block[c]!);
      bandEnvs[c]!.add(block[c]!);
    }
    done += block[0]!.length;
    onProgress?.(done / Math.max(1, source.frames));
  }
  const blockSeconds = blockFrames / source.sampleRateHz;
  // One channel after another, each channel's tables let go (and collected) before the next
  // channel's are worked on: on a 1-hour 96 kHz file a channel's band table is 20 MB (its levels
  // in dB are written over it).
  const channels: ReversedChannel[] = [];
  for (let c = 0; c < envs.length; c++) {
    channels.push({ channel: c + 1, ...judgeEnvelope(envs[c]!.values, blockSeconds, bandEnvs[c]!.levels(), true) });
    bandEnvs[c] = null;
    reclaim();
  }
  return { channels: decideMirroredPairs(channels, envs.map((e) => e.values)) };
}

/**
 * Pearson correlation of two channels' level envelopes (dB, floored as in asymmetryScore), block t
 * of `a` against block t + lag of `b` — or, `mirrored`, against block n − 1 − t + lag of `b` — over
 * the blocks where either is within 35 dB of its peak; the best over lags −2 … 2 (a reversal of a
 * length that is not a whole number of blocks shifts the blocks by up to one). 0 with fewer than 30
 * such blocks.
 */
export function envelopeCorrelation(a: Float32Array, b: Float32Array, mirrored: boolean): number {
  // dB computed block by block (no whole-envelope copies beyond the peak's sort).
  const pa = robustPeakDb(a), pb = robustPeakDb(b);
  const level = (p: number, peak: number) => Math.max(powerToDb(p + 1e-30) - peak, -FLOOR_DB);
  const n = b.length;
  let best = -1;
  for (let lag = -MIRROR_LAG_BLOCKS; lag <= MIRROR_LAG_BLOCKS; lag++) {
    let m = 0, sa = 0, sb = 0, saa = 0, sbb = 0, sab = 0;
    for (let t = 0; t < a.length; t++) {
      const k = mirrored ? n - 1 - t + lag : t + lag;
      if (k < 0 || k >= n) continue;
      const x = level(a[t]!, pa), y = level(b[k]!, pb);
      if (Math.max(x, y) < -ACTIVE_DB) continue;
      m++;
      sa += x; sb += y; saa += x * x; sbb += y * y; sab += x * y;
    }
    if (m < 30) continue;
    const cov = sab / m - (sa / m) * (sb / m), va = saa / m - (sa / m) ** 2, vb = sbb / m - (sb / m) ** 2;
    if (va > 0 && vb > 0) best = Math.max(best, cov / Math.sqrt(va * vb));
  }
  return Math.max(0, best);
}

/** The robust peak (99th percentile) of block powers, in dB, as asymmetryScore takes it. */
function robustPeakDb(power: Float32Array): number {
  const n = power.length;
  if (n === 0) return 0;
  const sorted = Float32Array.from(power).sort();
  return powerToDb(sorted[Math.min(n - 1, Math.floor(0.99 * (n - 1)))]! + 1e-30);
}

/** Leans towards "reversed" (sign +1) or "forward" (−1) on the broadband and the band cues together. */
function leans(c: ReversedChannel, sign: 1 | -1): boolean {
  const s = sign * (c.skew ?? 0), sb = sign * (c.bandSkew ?? 0);
  // bandsAgreeing is the share leaning the reported way, towards reversed when not determined
  // (1 − that share counts the bands leaning forward and those with no lean at all).
  const share = sign === 1 || c.likely === false ? (c.bandsAgreeing ?? 0) : 1 - (c.bandsAgreeing ?? 1);
  const [stops, starts] = sign === 1 ? [c.abruptStops, c.abruptStarts] : [c.abruptStarts, c.abruptStops];
  return s >= REVERSED_SCORE_THRESHOLD && sb >= MIRROR_BAND_SKEW && share >= 0.9 && (c.bands ?? 0) >= 3 && stops > starts;
}

/**
 * Two channels whose level envelopes are each other's mirror image in time (correlation ≥ 0.85
 * against the other played backwards, at least 0.5 more than forwards) carry the same programme,
 * one of them backwards: stereo programme played forwards has its channels' envelopes in step
 * (on the corpus the mirrored correlation exceeded the forward one by at most −0.02, a clip of
 * chords that reads almost the same both ways, whose forward correlation was 1). Which one is
 * reversed is then the one question left, and each channel's own lean answers it twice over:
 * when one leans reversed and the other forward on both the broadband and the band cues (≥ 90 %
 * of the bands), the first plays backwards and the second forwards. Decides only channels left
 * undetermined by their own evidence.
 */
export function decideMirroredPairs(channels: readonly ReversedChannel[], power: readonly Float32Array[]): ReversedChannel[] {
  const out = channels.slice();
  // Bounded work on many-channel files: at most MIRROR_MAX_PAIRS pairs are compared.
  let compared = 0;
  for (let i = 0; i < out.length; i++) {
    for (let j = 0; j < out.length; j++) {
      if (i === j) continue;
      const back = out[i]!, fwd = out[j]!;
      if (back.likely !== null || fwd.likely === true || !leans(back, 1) || !leans(fwd, -1)) continue;
      if (compared++ >= MIRROR_MAX_PAIRS) return out;
      const mirrored = envelopeCorrelation(power[i]!, power[j]!, true);
      if (mirrored < MIRROR_MIN_CORRELATION) continue;
      if (mirrored - envelopeCorrelation(power[i]!, power[j]!, false) < MIRROR_MIN_MARGIN) continue;
      out[i] = { ...back, likely: true, score: back.skew ?? back.score, basis: 'mirrors-channel', mirrorOf: fwd.channel, confidence: 0.8 };
      if (fwd.likely === null) out[j] = { ...fwd, likely: false, score: fwd.skew ?? fwd.score, basis: 'mirrors-channel', mirrorOf: back.channel, bandsAgreeing: 1 - (fwd.bandsAgreeing ?? 1), confidence: 0.8 };
    }
  }
  return out;
}
