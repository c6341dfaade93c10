/**
 * The analysis settings the editor offers (mains frequency, the wow-and-flutter test tone, the
 * echo search range), as values of the analyses' own parameters, kept between visits.
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

/** The settings shown in the findings panel: analysis, parameter, and how the editor names it. */
export const ANALYSIS_SETTINGS: readonly { op: string; param: string; label: string; hint: string }[] = [
  { op: 'speed', param: 'mainsHz', label: 'Mains frequency', hint: 'Hum is looked for at this frequency and its harmonics; automatic tries both.' },
  { op: 'flutter', param: 'toneHz', label: 'Wow and flutter tone', hint: 'The steady test tone measured for wow and flutter (a 1 kHz line-up tone works too).' },
  { op: 'echo', param: 'rangeSeconds', label: 'Echo search', hint: 'Delays searched for a reflection.' },
];
