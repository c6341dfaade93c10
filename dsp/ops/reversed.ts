/**
 * `reversed FILE`: per channel, does it play backwards? Scores the asymmetry of onsets and decays
 * (dsp/reverse/detect.ts): natural sounds rise fast and decay slowly, reversed ones swell and stop.
 */
import { REVERSED_MIN_ACTIVE_SECONDS, REVERSED_SCORE_THRESHOLD, detectReversedChannels, type ReversedResult } from '../reverse/detect.ts';
import type { AnalysisOp, Finding } from './types.ts';

export const reversed: AnalysisOp<ReversedResult> = {
  kind: 'analysis',
  name: 'reversed',
  key: 'reversed',
  title: 'Reversed channels',
  summary: 'Find channels that play backwards (a quarter-track reel transferred in one pass), from how sounds start and stop.',
  params: [],
  async run(source, _params, ctx) {
    return detectReversedChannels(source, (f) => ctx.progress(f));
  },
  toJson(result) {
    return { reversed: { channels: result.channels.map(({ channel, likely, score }) => ({ channel, likely, score })) } };
  },
  findings(result) {
    const out: Finding[] = [];
    for (const ch of result.channels) {
      if (ch.likely) {
        out.push({
          op: 'reversed',
          title: `Channel ${ch.channel} plays backwards`,
          sentence: `Channel ${ch.channel} swells into its sounds and stops them abruptly — the signature of a recording played in reverse (score ${ch.score.toFixed(2)}, ${ch.abruptStops} abrupt stops against ${ch.abruptStarts} abrupt starts; forward material scores below 0).`,
          value: ch.score,
          confidence: Math.min(1, ch.score),
          severity: 'warn',
          suggestion: { op: 'reverse', params: { channels: [ch.channel] } },
        });
      }
    }
    if (out.length === 0) {
      const judged = result.channels.filter((c) => c.activeSeconds >= REVERSED_MIN_ACTIVE_SECONDS);
      out.push({
        op: 'reversed',
        title: judged.length > 0 ? 'No channel plays backwards' : 'Too little material to judge direction',
        sentence:
          judged.length > 0
            ? `No channel shows the swell-then-stop shape of sound played backwards (scores ${result.channels.map((c) => c.score.toFixed(2)).join(', ')}; ${REVERSED_SCORE_THRESHOLD} or more would mean reversed, below 0 reads as forward).`
            : `Less than ${REVERSED_MIN_ACTIVE_SECONDS} s of sound loud enough to tell whether a channel plays backwards.`,
        severity: judged.length > 0 ? 'ok' : 'info',
      });
    }
    return out;
  },
};
