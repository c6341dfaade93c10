/** Every scorer `npm run eval` prints, one table each. */
import type { Scorer } from '../types.ts';
import { driftScorer, speedScorer, tuningScorer } from './speed.ts';
import { echoScorer, printThroughScorer } from './echo.ts';
import { azimuthScorer, reversedScorer } from './channels.ts';
import { bandwidthScorer, clippingScorer, dropoutScorer } from './levels.ts';

export const scorers: readonly Scorer[] = [
  speedScorer,
  driftScorer,
  tuningScorer,
  echoScorer,
  printThroughScorer,
  azimuthScorer,
  reversedScorer,
  dropoutScorer,
  clippingScorer,
  bandwidthScorer,
];
