/**
 * Pass/warn/fail rules of `reelwright check`: named metrics pulled from a file's analysis sections,
 * compared with thresholds. The metrics and their default rules (each with a plain-words comment)
 * come from the operation registry (each analysis's `metrics`) beside the check's own file and
 * fixity metrics below; `--thresholds FILE` replaces rules one by one. Pure: no file system here.
 */
import { ParameterError, BugError } from '../../dsp/errors.ts';
import { analyses, onRegistryChange } from '../../dsp/ops/registry.ts';
import { numberOf, objectOf, type Sections as OpSections } from '../../dsp/ops/sections.ts';
import type { GateMetric, GateRule } from '../../dsp/ops/types.ts';

export type Status = 'pass' | 'warn' | 'fail';

export type Rule = GateRule;
export type Thresholds = Record<string, Rule>;

export interface Judgement {
  status: Status;
  /** One plain sentence per crossed threshold, worst first. */
  reasons: string[];
}

/** What a metric is called in reasons, its unit, and how it is read. */
export type Metric = GateMetric;

/** The analysis sections of one file, keyed as in the JSON contract (levels, speed, echo…). */
export type Sections = OpSections & { error?: string };

/** The check's own metrics (the file entry and the fixity manifest), before the analyses' ones. */
const CHECK_METRICS: readonly GateMetric[] = [
  {
    id: 'file.unreadable', label: 'unreadable file', unit: '', digits: 0, get: (s) => (s.error !== undefined ? 1 : 0),
    defaultRule: { failAt: 1, comment: 'The file could not be opened or read to the end.' },
  },
  {
    id: 'file.nonFiniteSamples', label: 'NaN or infinite samples', unit: '', digits: 0, get: (s) => (s.error !== undefined ? undefined : numberOf(s.nonFiniteSamples) ?? 0),
    defaultRule: { failAt: 1, comment: 'Float samples that are NaN or infinite: a damaged file (they are analysed as 0).' },
  },
  {
    id: 'fixity.manifestChanged', label: 'SHA-256 differs from the manifest', unit: '', digits: 0, flag: true,
    // Only with --manifest (the entry has no `manifest` otherwise).
    get: (s) => (!('manifest' in s) || s.manifest === undefined ? undefined : s.manifest === 'changed' ? 1 : 0),
    defaultRule: { failAt: 1, comment: "With --manifest: the file's SHA-256 is not the one the manifest lists (the bytes changed since it was written)." },
  },
  {
    id: 'fixity.notInManifest', label: 'not listed in the manifest', unit: '', digits: 0, flag: true,
    get: (s) => (!('manifest' in s) || s.manifest === undefined ? undefined : s.manifest === 'unlisted' ? 1 : 0),
    defaultRule: { warnAt: 1, comment: 'With --manifest: an audio file the manifest does not list.' },
  },
  {
    id: 'file.sampleRateHz', label: 'sample rate', unit: 'Hz', digits: 0, get: (s) => numberOf(objectOf(s.file)?.sampleRateHz),
    defaultRule: { warnBelow: 48000, comment: 'Archive transfers are usually made at 48 kHz or more (96 kHz preferred), per common archive practice (IASA TC-04).' },
  },
  {
    id: 'file.bitsPerSample', label: 'word length', unit: 'bits', digits: 0, get: (s) => numberOf(objectOf(s.file)?.bitsPerSample),
    defaultRule: { warnBelow: 24, comment: 'Archive transfers are usually made at 24 bits.' },
  },
];

/** Every metric a rule can name: the check's own, then each analysis's in registry order. */
export function gateMetrics(): GateMetric[] {
  const all = [...CHECK_METRICS, ...analyses().flatMap((op) => op.metrics ?? [])];
  const seen = new Set<string>();
  for (const m of all) {
    if (seen.has(m.id)) throw new BugError(`gate metric "${m.id}" is defined twice`);
    seen.add(m.id);
  }
  return all;
}

/** The metrics by id (kept up to date with the registry). */
export const METRICS: Record<string, Metric> = {};
function refreshMetrics(): void {
  for (const k of Object.keys(METRICS)) delete METRICS[k];
  for (const m of gateMetrics()) METRICS[m.id] = m;
}
refreshMetrics();
onRegistryChange(refreshMetrics);

/** The default rules with their comments, in metric order (what `check --help` lists). */
export function documentedDefaults(): { id: string; rule: Rule; comment: string }[] {
  return gateMetrics().flatMap((m) => {
    if (!m.defaultRule) return [];
    const { comment, ...rule } = m.defaultRule;
    return [{ id: m.id, rule, comment }];
  });
}

/** The default rules, without their comments. */
export function defaultThresholds(): Thresholds {
  return Object.fromEntries(documentedDefaults().map((d) => [d.id, { ...d.rule }]));
}

/**
 * How one metric reads on one file's sections: `value` (a number to judge), `absent` (the file
 * could not be read, or the analysis did not run, does not apply or found nothing to judge, and
 * its result or note says so), or `missing`: the metric reads fields the result does not have (a
 * renamed or misspelt field), which would switch its gate off silently. `unknown`: no such metric.
 * A getter that reads a field which may legitimately be absent tests it with `in` first.
 */
export type Resolution =
  | { kind: 'value'; value: number }
  | { kind: 'absent' }
  | { kind: 'missing'; fields: string[] }
  | { kind: 'unknown' };

export function resolveMetric(id: string, sections: Sections): Resolution {
  const m = METRICS[id];
  if (!m) return { kind: 'unknown' };
  const missing: string[] = [];
  const value = m.get(recording(sections, '', missing) as Sections);
  if (value !== undefined) return { kind: 'value', value };
  if (sections.error !== undefined) return { kind: 'absent' };
  // An analysis that did not run (does not apply, found nothing) leaves a note instead of its section.
  const owner = analyses().find((op) => op.metrics?.includes(m));
  const notes = Array.isArray(sections.notes) ? (sections.notes as { op?: unknown }[]) : [];
  if (owner && notes.some((n) => n.op === owner.name)) return { kind: 'absent' };
  return missing.length ? { kind: 'missing', fields: [...new Set(missing)] } : { kind: 'absent' };
}

/**
 * One line per rule that could not be applied to some readable file because its metric reads a
 * field the results do not have: such a gate would otherwise be off without anyone knowing.
 */
export function unresolvedGates(entries: readonly Sections[], thresholds: Thresholds): string[] {
  const lines: string[] = [];
  for (const id of Object.keys(thresholds)) {
    const fields = new Set<string>();
    let files = 0;
    for (const e of entries) {
      const r = resolveMetric(id, e);
      if (r.kind !== 'missing') continue;
      files++;
      r.fields.forEach((f) => fields.add(f));
    }
    if (files) lines.push(`warning: rule "${id}" was not applied to ${files} file${files === 1 ? '' : 's'}: the results have no ${[...fields].join(', ')}`);
  }
  return lines;
}

/** A read-only view of `v` that notes every property read that the object does not have. */
function recording(v: unknown, path: string, missing: string[]): unknown {
  if (v === null || typeof v !== 'object') return v;
  return new Proxy(v as object, {
    get(target, prop, receiver) {
      const x = Reflect.get(target, prop, receiver) as unknown;
      if (typeof prop !== 'string') return x;
      if (!(prop in target)) missing.push(path ? `${path}.${prop}` : prop);
      return typeof x === 'function' ? x : recording(x, path ? `${path}.${prop}` : prop, missing);
    },
  });
}

/** Defaults overlaid with a user's rules (`null` switches a rule off). Throws ParameterError on unknown metrics or bad values. */
export function mergeThresholds(base: Thresholds, user: Record<string, unknown>, where: string): Thresholds {
  const out: Thresholds = { ...base };
  for (const [k, v] of Object.entries(user)) {
    if (k.startsWith('$')) continue;
    if (v === null) {
      if (!(k in METRICS)) throw new ParameterError(`${where}: unknown metric "${k}" (known: ${Object.keys(METRICS).join(', ')})`);
      delete out[k];
      continue;
    }
    Object.assign(out, cleanRules({ [k]: v }, where));
  }
  return out;
}

function cleanRules(raw: Record<string, unknown>, where: string): Thresholds {
  const out: Thresholds = {};
  for (const [k, v] of Object.entries(raw)) {
    if (k.startsWith('$')) continue;
    if (!(k in METRICS)) throw new ParameterError(`${where}: unknown metric "${k}" (known: ${Object.keys(METRICS).join(', ')})`);
    const r = objectOf(v);
    if (!r) throw new ParameterError(`${where}: "${k}" must be an object like {"warnAt": 1, "failAt": 5}`);
    const rule: Rule = {};
    for (const [f, x] of Object.entries(r)) {
      if (f.startsWith('$')) continue;
      if (!['warnAt', 'failAt', 'warnBelow', 'failBelow'].includes(f)) {
        throw new ParameterError(`${where}: "${k}.${f}": expected warnAt, failAt, warnBelow or failBelow`);
      }
      if (typeof x !== 'number' || !Number.isFinite(x)) throw new ParameterError(`${where}: "${k}.${f}" must be a number`);
      rule[f as keyof Rule] = x;
    }
    out[k] = rule;
  }
  return out;
}

const fmt = (v: number, digits: number) => (digits === 0 ? String(Math.round(v)) : v.toFixed(digits));

/** Judges one file: the worst status over all rules whose metric is present, with a reason for each crossing. */
export function judge(sections: Sections, thresholds: Thresholds): Judgement {
  const fails: string[] = [], warns: string[] = [];
  if (sections.error !== undefined && thresholds['file.unreadable']) {
    const r = thresholds['file.unreadable']!;
    const msg = `unreadable: ${sections.error}`;
    if (r.failAt !== undefined && 1 >= r.failAt) fails.push(msg);
    else if (r.warnAt !== undefined && 1 >= r.warnAt) warns.push(msg);
  }
  for (const [id, rule] of Object.entries(thresholds)) {
    if (id === 'file.unreadable') continue;
    const m = METRICS[id];
    const v = m?.get(sections);
    if (!m || v === undefined) continue;
    const u = m.unit ? ` ${m.unit}` : '';
    const say = (op: string, limit: number) => (m.flag ? m.label : `${m.label} ${fmt(v, m.digits)}${u} ${op} ${fmt(limit, m.digits)}${u}`);
    if (rule.failAt !== undefined && v >= rule.failAt) fails.push(say('≥', rule.failAt));
    else if (rule.failBelow !== undefined && v < rule.failBelow) fails.push(say('<', rule.failBelow));
    else if (rule.warnAt !== undefined && v >= rule.warnAt) warns.push(say('≥', rule.warnAt));
    else if (rule.warnBelow !== undefined && v < rule.warnBelow) warns.push(say('<', rule.warnBelow));
  }
  const status: Status = fails.length ? 'fail' : warns.length ? 'warn' : 'pass';
  return { status, reasons: [...fails.map((r) => `fail: ${r}`), ...warns.map((r) => `warn: ${r}`)] };
}
