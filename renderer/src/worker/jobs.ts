/** The worker's analysis jobs, all driven by the operation registry. */
import { CancelledError, NotFoundError } from '../../../dsp/errors.ts';
import { validateParams } from '../../../dsp/ops/params.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import { analysisJson } from '../../../dsp/ops/diagnose.ts';
import type { AudioSource } from '../../../dsp/source.ts';
import { MemorySource, readAll } from '../../../dsp/source.ts';
import { correctionOf, renderInMemory, type Progress } from './pipeline.ts';
import type { PreviewResult, Remeasure, StepSpec } from './protocol.ts';

export interface Processed {
  readonly source: AudioSource;
  readonly offsetSeconds: number;
  /** The original region it was rendered from (for re-measuring); null when adopted by the view worker. */
  readonly region: AudioSource | null;
}

function rmsDbfs(s: Float64Array[]): number {
  let sum = 0, n = 0;
  for (const c of s) { for (let i = 0; i < c.length; i++) sum += c[i]! * c[i]!; n += c.length; }
  return 10 * Math.log10(sum / Math.max(1, n) + 1e-20);
}

/** Renders the enabled steps over a region held in memory. */
export async function preview(source: AudioSource, steps: StepSpec[], startFrame: number, endFrame: number, p: Progress): Promise<{ result: PreviewResult; processed: Processed }> {
  const warnings: string[] = [];
  const prog: Progress = { progress: (f, l) => p.progress(0.1 + 0.9 * f, l), warn: (m) => { warnings.push(m); p.warn(m); }, signal: p.signal };
  p.progress(0, 'Reading');
  const regionData = await readAll(source, { startFrame, endFrame });
  const region = new MemorySource(regionData, source.sampleRateHz);
  const { out, resolved } = await renderInMemory(region, steps, prog);
  const data = await readAll(out);
  const processed: Processed = { source: new MemorySource(data, out.sampleRateHz), offsetSeconds: startFrame / source.sampleRateHz, region };
  return {
    processed,
    result: {
      startFrame,
      endFrame,
      sampleRateHz: out.sampleRateHz,
      channels: data.map((c) => Float32Array.from(c)),
      resolved,
      warnings,
      originalRmsDbfs: rmsDbfs(regionData),
      processedRmsDbfs: rmsDbfs(data),
    },
  };
}

/** Flattens an analysis result to named numbers and words (one level of nesting, no arrays). */
export function headline(json: Record<string, unknown>): Map<string, number | string> {
  const out = new Map<string, number | string>();
  const visit = (prefix: string, v: unknown, depth: number) => {
    if (typeof v === 'number' && Number.isFinite(v)) out.set(prefix, v);
    else if (typeof v === 'boolean') out.set(prefix, v ? 'yes' : 'no');
    else if (typeof v === 'string' && v.length < 40) out.set(prefix, v);
    else if (v && typeof v === 'object' && !Array.isArray(v) && !ArrayBuffer.isView(v) && depth < 2) {
      for (const [k, x] of Object.entries(v)) visit(prefix ? `${prefix}.${k}` : k, x, depth + 1);
    }
  };
  visit('', json, 0);
  return out;
}

/** For each step whose correction names the analysis it fixes, measures it on the region before and after. */
export async function remeasure(region: AudioSource, after: AudioSource, steps: StepSpec[], p: Progress): Promise<Remeasure[]> {
  const out: Remeasure[] = [];
  const seen = new Set<string>();
  for (let k = 0; k < steps.length; k++) {
    const corr = correctionOf(steps[k]!.op);
    const verb = corr.measures;
    if (!verb || seen.has(verb)) continue;
    seen.add(verb);
    const op = findOperation(verb);
    if (!op || op.kind !== 'analysis') continue;
    const ctx = { progress: (f: number) => p.progress(f, op.title), warn: p.warn, signal: p.signal };
    const measure = async (s: AudioSource) => {
      try {
        return headline(analysisJson(op, await op.run(s, validateParams(op.params, {}), ctx)));
      } catch (err) {
        if (err instanceof NotFoundError) return new Map<string, number | string>([['found', 'nothing']]);
        throw err;
      }
    };
    try {
      const b = await measure(region);
      const a = await measure(after);
      const names = [...new Set([...b.keys(), ...a.keys()])];
      out.push({ stepIndex: k, op: corr.name, analysis: op.name, rows: names.map((name) => ({ name, before: b.get(name) ?? null, after: a.get(name) ?? null })), error: null });
    } catch (err) {
      if (p.signal.aborted) throw new CancelledError('cancelled');
      out.push({ stepIndex: k, op: corr.name, analysis: op.name, rows: [], error: err instanceof Error ? err.message : String(err) });
    }
  }
  return out;
}
