/**
 * Where a correction suggested by a finding goes in the chain (lib/steps.ts holds the list
 * itself). Pure; loaded with the chain's other rules (state/chain.ts), not with the first paint.
 */
import type { CorrectionOp, ParamValues, SourceFacts } from '../../../dsp/ops/types.ts';
import { changesTime } from '../../../dsp/ops/timing.ts';
import type { FindCorrection, Step } from './steps.ts';

/**
 * Where a correction measured on the original recording belongs in the list: before the first
 * enabled step that changes time (a varispeed, a stretch, a reverse), when its own values are
 * delays or positions and it keeps time itself, so it runs on the material it was measured on.
 * Anything else goes at the end.
 */
export function placementIndex(steps: readonly Step[], op: CorrectionOp, params: ParamValues, facts: SourceFacts, find: FindCorrection): number {
  const timed = op.params.some((p) => p.quantity !== undefined && params[p.name] !== undefined);
  if (!timed || changesTime(op, params, facts) !== false) return steps.length;
  const k = steps.findIndex((s) => {
    const other = find(s.op);
    return s.enabled && other !== undefined && changesTime(other, s.params, facts) !== false;
  });
  return k < 0 ? steps.length : k;
}
