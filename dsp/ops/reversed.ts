/**
 * `reversed FILE`: per channel, does it play backwards? Scores the asymmetry of onsets and decays
 * (dsp/reverse/detect.ts): natural sounds rise fast and decay slowly, reversed ones swell and stop.
 * A channel whose evidence is thin or contradictory gets `likely: null` and a "not determined"
 * finding with the reason and no fix.
 */
import type { ReversedResult } from '../reverse/detect.ts';
import { REVERSED_MIN_ACTIVE_SECONDS, REVERSED_SCORE_THRESHOLD } from '../reverse/limits.ts';

const algorithms = () => import('../reverse/detect.ts');
import { defineAnalysis, type FindingDraft } from './types.ts';
import { arrayOf, objectOf, type Sections } from './sections.ts';

const reversedChannels = (s: Sections): number | undefined => arrayOf(objectOf(s.reversed)?.channels)?.filter((c) => objectOf(c)?.likely === true).length;

export const reversed = defineAnalysis<ReversedResult>()({
  kind: 'analysis',
  name: 'reversed',
  key: 'reversed',
  title: 'Reversed channels',
  summary: 'Find channels that play backwards (a quarter-track reel transferred in one pass), from how sounds start and stop.',
  params: [],
  // The algorithms load on first use (the editor page reads only this spec; diagnose preloads them).
  load: algorithms,
  async run(source, _params, ctx) {
    const { detectReversedChannels } = await algorithms();
    return detectReversedChannels(source, (f) => ctx.progress(f));
  },
  toJson(result) {
    return { reversed: { channels: result.channels.map(({ channel, likely, score }) => ({ channel, likely, score })) } };
  },
  findings(result) {
    const out: FindingDraft[] = [];
    const evidence = (ch: ReversedResult['channels'][number]) =>
      ch.basis === 'many-events'
        ? `${ch.likely ? ch.abruptStops : ch.abruptStarts} hard ${ch.likely ? 'stops' : 'starts'} against ${ch.likely ? ch.abruptStarts : ch.abruptStops} hard ${ch.likely ? 'starts' : 'stops'}` +
          (ch.gatedNotes ? `, leaving out ${ch.gatedNotes} note${ch.gatedNotes === 1 ? '' : 's'} that start and stop abruptly` : '')
        : ch.basis === 'staggered-edges'
            ? `${ch.staggeredStops ?? 0} hard stops whose frequency bands drop out one after another, as a natural attack builds up, read backwards; no hard start`
          : ch.basis === 'mirrors-channel'
            ? `its level follows channel ${ch.mirrorOf} played backwards, and of the two it is the one that swells into hard stops in ${Math.round((ch.bandsAgreeing ?? 0) * (ch.bands ?? 0))} of its ${ch.bands ?? 0} frequency bands while channel ${ch.mirrorOf} starts hard and fades`
          : ch.basis === 'one-note'
            ? `one swell into a hard stop that is a struck or plucked note's decay played backwards: its frequency bands rise at rates of their own, the high ones fastest (rank correlation of band rate with frequency ${(ch.rampBandTilt ?? 0).toFixed(2)}), and it ends in the note's attack, the top bands ${(ch.edgeAttackDb ?? 0).toFixed(0)} dB above their swell's line at the stop and ${(ch.edgeAttackTiltDb ?? 0).toFixed(0)} dB more than the bottom bands — a fade moves every band alike and ends on no attack`
          : ch.basis === 'bands-agree'
            ? `in ${Math.round((ch.bandsAgreeing ?? 0) * (ch.bands ?? 0))} of its ${ch.bands ?? 0} frequency bands the level fades in and cuts off (band skew ${(ch.bandSkew ?? 0).toFixed(2)}, median over the bands ${(ch.bandMedian ?? 0).toFixed(2)})`
            : `${ch.swellsIntoStops ?? 0} swells straight into hard stops and no decay after a hard start`;
    for (const ch of result.channels) {
      if (ch.likely === true) {
        out.push({
          title: `Channel ${ch.channel} plays backwards`,
          sentence: `Channel ${ch.channel} swells into its sounds and stops them abruptly — the signature of a recording played in reverse (score ${ch.score.toFixed(2)}; ${evidence(ch)}).`,
          value: ch.score,
          confidence: ch.confidence ?? Math.min(1, ch.score),
          severity: 'warn',
          suggestion: { op: 'reverse', params: { channels: [ch.channel] } },
        });
      }
    }
    const unknown = result.channels.filter((c) => c.likely === null);
    for (const ch of unknown) {
      const why =
        ch.basis === 'too-little-sound'
          ? `less than ${REVERSED_MIN_ACTIVE_SECONDS} s of sound loud enough to judge`
          : ch.basis === 'no-hard-edges'
            ? 'its sounds neither start nor stop abruptly (sustained or steady material), so their shape does not tell the direction'
            : ch.basis === 'fade-like'
              ? (ch.rampBandSpread ?? 0) < 6
                ? `its one ${ch.abruptStops > ch.abruptStarts ? 'swell into a hard stop' : 'decay after a hard start'} moves every frequency band together (band spread ${(ch.rampBandSpread ?? 0).toFixed(1)}), as a fade applied as a gain does, while a free decay has a rate of its own in each band — one fade and one cut read the same either way round`
                : `its ${ch.abruptStops > ch.abruptStarts ? 'swell into a hard stop' : 'decay after a hard start'} does not have its high frequency bands ${ch.abruptStops > ch.abruptStarts ? 'rising' : 'falling'} fastest (rank correlation of band rate with frequency ${(ch.rampBandTilt ?? 0).toFixed(2)}), as a decaying note${ch.abruptStops > ch.abruptStarts ? ' played backwards' : ''} does; ${ch.abruptStops > ch.abruptStarts ? "a forward note's own decay under a fade-in" : 'a note played backwards under a fade-out'} looks like this — one fade and one cut read the same either way round`
            : ch.basis === 'one-ramp'
              ? `its one ${ch.abruptStops > ch.abruptStarts ? 'swell into a hard stop' : 'decay after a hard start'} is one sound only: it has the shape of a decaying note${ch.abruptStops > ch.abruptStarts ? ' played backwards' : ''}, but ${ch.abruptStops > ch.abruptStarts ? 'a forward sound faded in and cut off' : 'a sound played backwards, faded out and cut in,'} can look the same in its level and in its frequency bands, and no other sound says which way round it is`
            : ch.basis === 'cues-disagree'
              ? `its level steps lean one way (skew ${(ch.skew ?? ch.score).toFixed(2)}) but too few of its sounds say which way (${ch.abruptStarts} hard starts, ${ch.abruptStops} hard stops${ch.gatedNotes ? `, ${ch.gatedNotes} of them notes that start and stop abruptly, which read the same either way round` : ''}) — slow attacks with quick releases (winds, bowed strings, organ, fades) look like this either way round`
              : `too few independent sounds agree (${ch.abruptStarts} hard starts, ${ch.abruptStops} hard stops, skew ${(ch.skew ?? ch.score).toFixed(2)})`;
      out.push({
        title: `Direction of channel ${ch.channel} not determined`,
        sentence: `Whether channel ${ch.channel} plays backwards is not determined: ${why}. Listen to it.`,
        severity: 'info',
      });
    }
    if (out.length === 0) {
      out.push({
        title: 'No channel plays backwards',
        sentence: `Every channel starts its sounds abruptly and lets them die away, as sound played forwards does (scores ${result.channels.map((c) => c.score.toFixed(2)).join(', ')}; ${REVERSED_SCORE_THRESHOLD} or more would mean reversed, below 0 reads as forward).`,
        severity: 'ok',
      });
    }
    return out;
  },

  // The batch report's column and the check's gate.
  columns: [{ header: 'reversedChannels', get: reversedChannels }],
  metrics: [
    {
      id: 'reversed.channels', label: 'reversed channels', unit: '', digits: 0, get: reversedChannels,
      defaultRule: { failAt: 1, comment: 'Channels that are likely recorded in the other direction.' },
    },
  ],
});
