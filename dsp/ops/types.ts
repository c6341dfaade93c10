/**
 * Operations are data. Each analysis and each correction is one module exporting one object of
 * these types; dsp/ops/registry.ts lists them once, and the command line, the editor and the batch
 * report are all built from that list.
 */
import type { AudioSource, Block } from '../source.ts';
import type { Frames, Hertz } from '../units.ts';
import type { OpContext } from '../context.ts';
import type { Sections } from './sections.ts';

export type { OpContext } from '../context.ts';
export { silentContext } from '../context.ts';
export type { Sections } from './sections.ts';

export type ParamType = 'number' | 'integer' | 'boolean' | 'string' | 'enum' | 'range' | 'list';

/** One parameter: how it is named, typed, bounded and explained, on the command line and in the editor. */
export interface ParamSpec {
  /** Key in the params object, camelCase with the unit in it where there is one (`delaySeconds`). */
  readonly name: string;
  /** Command-line flag without the dashes (`delay` → `--delay`). */
  readonly flag: string;
  readonly type: ParamType;
  /** Short label for the editor ("Delay"). */
  readonly label: string;
  /** One sentence of help, shown by `--help` and as the editor's tooltip. */
  readonly help: string;
  /** Unit shown beside the value: 's', 'ms', 'Hz', 'dB', '%', 'cents', 'semitones', '×'. */
  readonly unit?: string;
  readonly min?: number;
  readonly max?: number;
  /** For 'enum'. */
  readonly choices?: readonly string[];
  /** Absent = optional with no default (undefined means "measure it" / "automatic"). */
  readonly default?: number | boolean | string | readonly number[];
  /** Only meaningful on the command line (e.g. a path); the editor hides it. */
  readonly cliOnly?: boolean;
  /**
   * What the number is, so a chain of corrections can carry it across a step that changes time
   * (dsp/ops/timing.ts): 'delay', a lag within the sound (a reflection, the delay between the
   * channels; a range of them for a 'range'); 'instant', a position in the recording in seconds
   * from its start. Absent: neither (a gain, a factor, a channel number).
   */
  readonly quantity?: 'delay' | 'instant';
  /** The operation measures this on its own input when it is left out. */
  readonly measured?: boolean;
}

/** A parsed `range` parameter: `MIN:MAX` on the command line. */
export type RangeValue = readonly [number, number];

export type ParamValue = number | boolean | string | RangeValue | readonly number[] | undefined;
export type ParamValues = Record<string, ParamValue>;

/** Static facts about the input that decide whether an operation applies. */
export interface SourceFacts {
  readonly sampleRateHz: Hertz;
  readonly channelCount: number;
  readonly frames: Frames;
}

/** A plain-language finding for `diagnose`, the editor's findings list and the batch report. */
export interface Finding extends FindingDraft {
  /** The analysis that produced it (its verb), stamped by `findingsOf`. */
  readonly op: string;
}

/** A finding as an analysis writes it: everything but the analysis's name. */
export interface FindingDraft {
  /** Short title: "Played 2 % fast". */
  readonly title: string;
  /** One plain sentence for a supervisor or an engineer. */
  readonly sentence: string;
  /** Headline number and its unit, for tables. */
  readonly value?: number | string;
  readonly unit?: string;
  readonly confidence?: number;
  /** 'ok' means "looked and found nothing wrong". */
  readonly severity: 'ok' | 'info' | 'warn' | 'fail';
  /** The correction that would fix it, with the measured parameters filled in. */
  readonly suggestion?: { readonly op: string; readonly params: ParamValues };
}

interface OperationBase {
  /** The command-line verb, lower-case (`speed`, `unecho`). */
  readonly name: string;
  /** Human title for the editor ("Speed"). */
  readonly title: string;
  /** One line for `reelwright --help` and the editor. */
  readonly summary: string;
  readonly params: readonly ParamSpec[];
  /** Whether the operation can run on this input (e.g. azimuth needs two channels). */
  applies?(facts: SourceFacts): boolean;
  /**
   * Loads the algorithms `run`/`prepare` use. They are imported on first use, so whoever reads
   * only the spec (the editor page) does not carry them; diagnose calls this for every analysis
   * before starting them together, so all of them meet the shared decoding pass.
   */
  readonly load?: () => Promise<unknown>;
}

export interface AnalysisOp<R = unknown> extends OperationBase {
  readonly kind: 'analysis';
  /** Key of the result in the JSON output (`speed`, `echo`, …; see the contract). */
  readonly key: string;
  /** Include in `diagnose` and `check` (default true). */
  readonly inDiagnose?: boolean;
  run(source: AudioSource, params: ParamValues, ctx: OpContext): Promise<R>;
  /**
   * Extra top-level JSON keys beside `key` (e.g. echo also prints `printThrough`). The result is
   * printed as `{ [key]: result }` unless this returns the keys itself.
   */
  toJson?(result: R): Record<string, unknown>;
  /**
   * Plain-language findings for diagnose / editor / report. Each is written without its `op`:
   * `findingsOf` (dsp/ops/diagnose.ts) stamps the analysis's own name on every one.
   */
  findings?(result: R, facts: SourceFacts): FindingDraft[];
  /** Renders the result (and optionally a second result to compare) as a file: `--out NAME.svg|.csv`. */
  render?(result: R, format: 'svg' | 'csv', compareWith?: R): string;
  /** Before/after comparison for `--compare OTHER` and the editor's compare view. */
  compare?(before: R, after: R): Record<string, unknown>;
  /** Columns this analysis adds to the batch report (CSV, and the HTML "Numbers" of each file), in order. */
  readonly columns?: readonly ReportColumn[];
  /** Cells this analysis adds to the HTML report's overview table (one row per file). */
  readonly overview?: readonly OverviewCell[];
  /** Numbers the check's pass/warn/fail rules can name, each with its default rule if it has one. */
  readonly metrics?: readonly GateMetric[];
}

/**
 * One column of the batch report, read from a file's sections (`{ file, levels, speed, … }` as
 * `--json` prints them): undefined when the analysis did not run or has no such number.
 */
export interface ReportColumn {
  /** CSV header and the label in the HTML numbers, camelCase with the unit (`loudnessLufs`). */
  readonly header: string;
  get(s: Sections): string | number | boolean | undefined;
}

/** One cell of the HTML report's overview table. */
export interface OverviewCell {
  /** Column heading with its unit ("Loudness LUFS"). */
  readonly heading: string;
  /** The cell's text ("—" when there is nothing to show). */
  text(s: Sections): string;
}

/** A pass/warn/fail rule: at or above `…At`, below `…Below`. */
export interface GateRule {
  warnAt?: number;
  failAt?: number;
  warnBelow?: number;
  failBelow?: number;
}

/** A number the check can gate on (`--thresholds` names it by `id`). */
export interface GateMetric {
  /** `section.name` as a thresholds file names it (`levels.truePeakDbtp`). */
  readonly id: string;
  /** What a reason calls it ("true peak"), its unit and the decimals shown. */
  readonly label: string;
  readonly unit: string;
  readonly digits: number;
  /** A yes/no metric (1 or 0): a crossed rule's reason is the label alone. */
  readonly flag?: boolean;
  /**
   * The value; undefined when the analysis did not run, does not apply or found nothing to
   * judge. Reading a field the result does not have is a defect the resolution test catches
   * (main/check/thresholds.ts `resolveMetric`).
   */
  get(s: Sections): number | undefined;
  /** The rule `check` applies unless a thresholds file replaces it, with one sentence saying what it flags. */
  readonly defaultRule?: Readonly<GateRule> & { readonly comment: string };
}

/** What a correction produces: the output's shape and its blocks. */
export interface Rendering {
  readonly sampleRateHz: Hertz;
  readonly channelCount: number;
  /** Expected output length if known in advance (for progress and headers). */
  readonly framesHint?: Frames;
  readonly blocks: AsyncIterable<Block>;
  /** Parameters actually used (after measuring), for the JSON output and coding history. */
  readonly resolved: ParamValues;
}

export interface CorrectionOp extends OperationBase {
  readonly kind: 'correction';
  /**
   * Measure what is needed (may read the source), then return the rendering. Reading the source
   * again inside `blocks` is allowed: sources support many passes.
   */
  prepare(source: AudioSource, params: ParamValues, ctx: OpContext): Promise<Rendering>;
  /** Analysis verb re-measured on input and output for `--json` before/after. */
  readonly measures?: string;
  /** Free text for the BWF CodingHistory `T=` field, e.g. "reelwright unecho delay=0.0231s gain=0.42". */
  history(resolved: ParamValues): string;
  /**
   * How the output's time relates to the input's, from the resolved parameters and the input's
   * facts (dsp/ops/timing.ts), so a chain can carry measured delays and positions across this
   * step. Absent: the step keeps time (every instant stays where it was, delays unchanged).
   */
  timing?(resolved: ParamValues, facts: SourceFacts): StepTiming;
}

/** One linear piece of a time map: input [inStart, inEnd] s → output [outStart, outEnd] s (outEnd < outStart when reversed). */
export interface TimeSegment {
  readonly inStart: number;
  readonly inEnd: number;
  readonly outStart: number;
  readonly outEnd: number;
}

/** What a correction does to time. */
export interface StepTiming {
  /** Piecewise-linear map of input seconds to output seconds: segments in input order, covering the input. */
  readonly segments: readonly TimeSegment[];
  /**
   * A lag of `delaySeconds` within the sound of the input (a reflection, a channel delay) as it is
   * in the output, or null when it does not survive as one lag (it must be measured again there).
   */
  mapDelay(delaySeconds: number): number | null;
}

export type Operation = AnalysisOp | CorrectionOp;

/** The value a parameter of this spec has inside `run`/`prepare` (after validateParams). */
export type ParamValueOf<S> = S extends { readonly type: 'number' | 'integer' }
  ? number
  : S extends { readonly type: 'boolean' }
    ? boolean
    : S extends { readonly type: 'enum'; readonly choices: readonly (infer C)[] }
      ? C
      : S extends { readonly type: 'string' | 'enum' }
        ? string
        : S extends { readonly type: 'range' }
          ? RangeValue
          : S extends { readonly type: 'list' }
            ? readonly number[]
            : never;

/**
 * The parameters of a spec list, typed: `params.toneHz` is a number, a misspelt name does not
 * compile. Each may be absent (validateParams fills defaults, but a direct caller may leave one out).
 */
export type ParamsOf<P extends readonly ParamSpec[]> = { readonly [S in P[number] as S['name']]?: ParamValueOf<S> };

/** An analysis as written in its module: `run` receives its parameters typed by its `params`. */
export interface AnalysisDefinition<R, P extends readonly ParamSpec[]> extends Omit<AnalysisOp<R>, 'params' | 'run'> {
  readonly params: P;
  run(source: AudioSource, params: ParamsOf<P>, ctx: OpContext): Promise<R>;
}

/** A correction as written in its module: `prepare` receives its parameters typed by its `params`. */
export interface CorrectionDefinition<P extends readonly ParamSpec[]> extends Omit<CorrectionOp, 'params' | 'prepare'> {
  readonly params: P;
  prepare(source: AudioSource, params: ParamsOf<P>, ctx: OpContext): Promise<Rendering>;
}

/**
 * `export const speed = defineAnalysis<SpeedResult>()({ kind: 'analysis', name: 'speed', params: […], run(source, params, ctx) {…} })`:
 * the parameter names and types of `params` type `run`'s parameters (the result type is given,
 * the parameters are inferred). The registry holds it as a plain AnalysisOp.
 */
export const defineAnalysis =
  <R>() =>
  <const P extends readonly ParamSpec[]>(op: AnalysisDefinition<R, P>): AnalysisOp<R> =>
    op as unknown as AnalysisOp<R>;

/** As defineAnalysis, for a correction. */
export const defineCorrection = <const P extends readonly ParamSpec[]>(op: CorrectionDefinition<P>): CorrectionOp => op as unknown as CorrectionOp;

/**
 * The members of an operation that do its work (and whatever only they import): everything else
 * is its spec — name, title, summary, params, key, timing, report columns, gate metrics — which is
 * all the editor page reads. The page's build leaves these out of every operation
 * (renderer/operation-specs.ts); the worker, the command line and the check keep them.
 */
export const IMPLEMENTATION_MEMBERS = ['load', 'run', 'prepare', 'findings', 'toJson', 'render', 'compare', 'history'] as const satisfies readonly (
  | keyof AnalysisOp
  | keyof CorrectionOp
)[];

/** The members only the batch report and the check's gates read (the page's build leaves them out too). */
export const REPORT_MEMBERS = ['columns', 'overview', 'metrics'] as const satisfies readonly (keyof AnalysisOp)[];
