/**
 * The analysis settings the editor offers (mains frequency, the wow-and-flutter test tone, the
 * echo search range; components/analysis-settings.svelte lists them), as values of the analyses'
 * own parameters, kept between visits.
 */
import type { ParamValues } from '../../../dsp/ops/types.ts';

const KEY = 'reelwright.analysis.v1';

export type AnalysisParams = Record<string, ParamValues>;

export function loadAnalysisParams(): AnalysisParams {
  try {
    const v = JSON.parse(globalThis.localStorage?.getItem(KEY) ?? '{}') as unknown;
    return v && typeof v === 'object' && !Array.isArray(v) ? (v as AnalysisParams) : {};
  } catch { return {}; }
}

export function saveAnalysisParams(p: AnalysisParams): void {
  try { globalThis.localStorage?.setItem(KEY, JSON.stringify(p)); } catch { /* a convenience only */ }
}
