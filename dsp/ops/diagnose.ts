/**
 * Runs every registered analysis that applies to a source and gathers their JSON sections and
 * plain-language findings. Used by `reelwright diagnose`, the batch check and the editor's worker,
 * so all three always show the same analyses.
 */
import type { AudioSource } from '../source.ts';
import { NotFoundError, ParameterError } from '../errors.ts';
import { analyses } from './registry.ts';
import { validateParams } from './params.ts';
import type { AnalysisOp, Finding, OpContext, ParamValues, SourceFacts } from './types.ts';

export interface DiagnoseOptions {
  /** Only these analysis verbs (default: all with inDiagnose !== false). */
  only?: readonly string[];
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

/** The JSON sections one analysis contributes (its `key`, or what its toJson returns). */
export function analysisJson<R>(op: AnalysisOp<R>, result: R): Record<string, unknown> {
  return op.toJson ? op.toJson(result) : { [op.key]: result };
}

export async function diagnose(source: AudioSource, ctx: OpContext, options: DiagnoseOptions = {}): Promise<DiagnoseResult> {
  const facts = factsOf(source);
  const ops = analyses().filter((op) =>
    options.only ? options.only.includes(op.name) : op.inDiagnose !== false,
  );
  const out: DiagnoseResult = { sections: {}, findings: [], notes: [] };
  for (let i = 0; i < ops.length; i++) {
    const op = ops[i]!;
    if (op.applies && !op.applies(facts)) {
      out.notes.push({ op: op.name, reason: 'does not apply to this file' });
      continue;
    }
    const sub: OpContext = {
      progress: (f) => ctx.progress((i + Math.min(1, Math.max(0, f))) / ops.length),
      warn: (m) => ctx.warn(`${op.name}: ${m}`),
      signal: ctx.signal,
    };
    try {
      const params = validateParams(op.params, options.params?.[op.name] ?? {});
      const result = await op.run(source, params, sub);
      Object.assign(out.sections, analysisJson(op, result));
      out.findings.push(...(op.findings?.(result, facts) ?? []));
    } catch (e) {
      if (e instanceof NotFoundError || e instanceof ParameterError) {
        out.notes.push({ op: op.name, reason: e.message });
      } else {
        throw e;
      }
    }
    ctx.progress((i + 1) / ops.length);
  }
  return out;
}
