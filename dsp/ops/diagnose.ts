/**
 * Runs every registered analysis that applies to a source and gathers their JSON sections and
 * plain-language findings. Used by `reelwright diagnose`, the batch check and the editor's worker,
 * so all three always show the same analyses.
 */
import type { AudioSource } from '../source.ts';
import { NotFoundError, ParameterError } from '../errors.ts';
import { analyses } from './registry.ts';
import { validateParams } from './params.ts';
import { SharedPass } from '../shared-pass.ts';
import type { AnalysisOp, Finding, OpContext, ParamValues, SourceFacts } from './types.ts';

export interface DiagnoseOptions {
  /** Only these analysis verbs (default: all with inDiagnose !== false). */
  only?: readonly string[];
  /**
   * Run the analyses one after another instead of all together over one shared decoding pass
   * (the default: every full forward pass that starts together shares one read of the file).
   */
  sequential?: boolean;
  /** Parameters per verb (validated against each op's specs). */
  params?: Readonly<Record<string, ParamValues>>;
}

export interface DiagnoseResult {
  /** JSON sections keyed as in the contract (speed, echo, printThrough, levels, …). */
  sections: Record<string, unknown>;
  findings: Finding[];
  /** Analyses that did not run or found nothing they could stand behind, with the reason. */
  notes: { op: string; reason: string }[];
}

export const factsOf = (s: AudioSource): SourceFacts => ({
  sampleRateHz: s.sampleRateHz,
  channelCount: s.channelCount,
  frames: s.frames,
});

/** The analysis's findings on this result, each carrying the analysis's name (first, as in the JSON before). */
export function findingsOf<R>(op: AnalysisOp<R>, result: R, facts: SourceFacts): Finding[] {
  return (op.findings?.(result, facts) ?? []).map((f) => ({ op: op.name, ...f }));
}

/** The JSON sections one analysis contributes (its `key`, or what its toJson returns). */
export function analysisJson<R>(op: AnalysisOp<R>, result: R): Record<string, unknown> {
  return op.toJson ? op.toJson(result) : { [op.key]: result };
}

export async function diagnose(source: AudioSource, ctx: OpContext, options: DiagnoseOptions = {}): Promise<DiagnoseResult> {
  const facts = factsOf(source);
  const ops = analyses().filter((op) =>
    options.only ? options.only.includes(op.name) : op.inDiagnose !== false,
  );
  const fractions = new Float64Array(ops.length);
  const report = (i: number, f: number) => {
    fractions[i] = Math.min(1, Math.max(0, f));
    ctx.progress(fractions.reduce((a, b) => a + b, 0) / Math.max(1, ops.length));
  };
  const runOne = async (op: AnalysisOp, i: number, input: AudioSource): Promise<DiagnoseResult> => {
    const part: DiagnoseResult = { sections: {}, findings: [], notes: [] };
    if (op.applies && !op.applies(facts)) {
      part.notes.push({ op: op.name, reason: 'does not apply to this file' });
      report(i, 1);
      return part;
    }
    const sub: OpContext = { progress: (f) => report(i, f), warn: (m) => ctx.warn(`${op.name}: ${m}`), signal: ctx.signal };
    try {
      const params = validateParams(op.params, options.params?.[op.name] ?? {});
      const result = await op.run(input, params, sub);
      Object.assign(part.sections, analysisJson(op, result));
      part.findings.push(...findingsOf(op, result, facts));
    } catch (e) {
      if (e instanceof NotFoundError || e instanceof ParameterError) part.notes.push({ op: op.name, reason: e.message });
      else throw e;
    }
    report(i, 1);
    return part;
  };
  // Every algorithm loaded first, so the analyses started together all meet the shared pass.
  await Promise.all(ops.map((op) => op.load?.()));
  let parts: DiagnoseResult[];
  if (options.sequential) {
    parts = [];
    for (let i = 0; i < ops.length; i++) parts.push(await runOne(ops[i]!, i, source));
  } else {
    const shared = new SharedPass(source).source<AudioSource>();
    parts = await Promise.all(ops.map((op, i) => runOne(op, i, shared)));
  }
  // Merged in registry order, whatever order the analyses finished in.
  const out: DiagnoseResult = { sections: {}, findings: [], notes: [] };
  for (const p of parts) {
    Object.assign(out.sections, p.sections);
    out.findings.push(...p.findings);
    out.notes.push(...p.notes);
  }
  return out;
}
