/**
 * Shapes shared by the evaluation runner (`npm run eval`) and its scorers. A scorer looks at one
 * clip's diagnose output beside the clip's known truth and says whether the fault it covers is
 * there, whether the analysis claimed it, whether the claim was right, and by how much it erred.
 */
import type { CorpusClip } from '../corpus/index.ts';
import type { Finding } from '../../dsp/ops/types.ts';

/** What `diagnose` said about one clip (the JSON sections of the contract and the findings). */
export interface ClipResult {
  id: string;
  sections: Record<string, any>;
  findings: Finding[];
  notes: { op: string; reason: string }[];
  cpuSeconds: number;
  error?: string;
}

export interface Judgement {
  /** The fault is in the clip's truth. */
  present: boolean;
  /** The fault is inside the range a bar asks to be found (e.g. |g| ≥ 0.2, 1–300 ms). */
  inBar?: boolean;
  /** The analysis claims the fault (a warning a user sees, or `present: true` in the JSON). */
  claimed: boolean;
  /** Claimed and identified: the right reflection, the right speed, the right channel… */
  found?: boolean;
  /** Found and within the bar's accuracy. */
  withinBar?: boolean;
  /** Absolute errors of the claim against the truth, for statistics (units in the keys). */
  errors?: Record<string, number>;
  /** Size of a false claim, for the worst-case column (e.g. the claimed speed error in %). */
  claimSize?: number;
  /** Claims with a confidence, and whether each is true: the calibration table. */
  calibration?: { confidence: number; true: boolean }[];
  /** One line for the listing of misses and false alarms. */
  note?: string;
}

export interface ScoreContext {
  /** The diagnose output of another clip (e.g. an impaired clip's clean original). */
  result(id: string): ClipResult | undefined;
  clip(id: string): CorpusClip | undefined;
}

export interface Scorer {
  /** Table name ("speed", "echo", "print-through", …). */
  readonly name: string;
  /** The bars of the analyses issue this table is judged by, in words. */
  readonly bars: string;
  /** null when the clip says nothing about this fault (e.g. azimuth on a mono clip). */
  judge(clip: CorpusClip, result: ClipResult, ctx: ScoreContext): Judgement | null;
}

/** One correction run on an impaired clip, measured against its reference (test/eval/measures.ts). */
export interface CorrectionResult {
  id: string;
  metrics: Record<string, number>;
  /** Parameters the correction used (after measuring): what it cancelled, which factor… */
  resolved: Record<string, unknown>;
  warnings: string[];
  cpuSeconds: number;
  error?: string;
}
