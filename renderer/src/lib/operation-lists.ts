/**
 * What the editor lists from the operation registry: the analyses the findings rail says it ran
 * (every one diagnose runs) and the corrections "Add a correction…" offers. Specs only: the
 * algorithms run in the worker.
 */
import { analyses, corrections } from '../../../dsp/ops/registry.ts';
import type { CorrectionOp } from '../../../dsp/ops/types.ts';

/** Titles of the analyses run when a file opens, in registry order. */
export const checkedAnalysisTitles = (): string[] => analyses().filter((a) => a.inDiagnose !== false).map((a) => a.title);

/** The corrections a step can be, in registry order. */
export const correctionChoices = (): CorrectionOp[] => corrections();
