/** Validation of parameter values against their ParamSpec: one place, used by CLI, editor and batch. */
import { ParameterError } from '../errors.ts';
import type { ParamSpec, ParamValue, ParamValues } from './types.ts';

/** Parses one command-line string into a typed value, or throws ParameterError naming the flag. */
export function parseParam(spec: ParamSpec, text: string | boolean): ParamValue {
  const bad = (why: string) => new ParameterError(`--${spec.flag} ${String(text)}: ${why}`);
  switch (spec.type) {
    case 'boolean':
      if (typeof text === 'boolean') return text;
      if (/^(1|true|yes|on)$/i.test(text)) return true;
      if (/^(0|false|no|off)$/i.test(text)) return false;
      throw bad('expected true or false');
    case 'string':
      if (typeof text !== 'string') throw bad('expected a value');
      return text;
    case 'enum':
      if (typeof text !== 'string' || !spec.choices?.includes(text)) {
        throw bad(`expected one of ${spec.choices?.join(', ')}`);
      }
      return text;
    case 'number':
    case 'integer': {
      if (typeof text !== 'string') throw bad('expected a number');
      const v = parseNumber(text);
      if (!Number.isFinite(v)) throw bad('expected a number');
      return v;
    }
    case 'range': {
      if (typeof text !== 'string') throw bad('expected MIN:MAX');
      const parts = text.split(':');
      const lo = parseNumber(parts[0] ?? '');
      const hi = parseNumber(parts[1] ?? '');
      if (parts.length !== 2 || !Number.isFinite(lo) || !Number.isFinite(hi)) throw bad('expected MIN:MAX');
      return [lo, hi] as const;
    }
    case 'list': {
      if (typeof text !== 'string') throw bad('expected a comma-separated list');
      const vs = text.split(',').map((s) => parseNumber(s.trim()));
      if (vs.length === 0 || vs.some((v) => !Number.isFinite(v))) throw bad('expected a comma-separated list of numbers');
      return vs;
    }
  }
}

/** Accepts plain decimals and simple fractions such as 160/147. */
function parseNumber(text: string): number {
  const t = text.trim();
  if (t === '') return NaN;
  const frac = /^([-+]?[\d.]+(?:e[-+]?\d+)?)\/([\d.]+(?:e[-+]?\d+)?)$/i.exec(t);
  if (frac) return Number(frac[1]) / Number(frac[2]);
  return Number(t);
}

/**
 * Checks types and bounds, fills defaults, and rejects unknown keys. Returns a new object.
 * Throws ParameterError with the flag, the value and the allowed range.
 */
export function validateParams(specs: readonly ParamSpec[], values: ParamValues): ParamValues {
  const out: ParamValues = {};
  const known = new Set(specs.map((s) => s.name));
  for (const key of Object.keys(values)) {
    if (!known.has(key)) throw new ParameterError(`unknown parameter "${key}"`);
  }
  for (const spec of specs) {
    let v = values[spec.name];
    if (v === undefined) v = spec.default as ParamValue;
    if (v === undefined) continue;
    const where = `--${spec.flag} ${Array.isArray(v) ? v.join(spec.type === 'range' ? ':' : ',') : String(v)}`;
    const inBounds = (x: number) =>
      (spec.min === undefined || x >= spec.min) && (spec.max === undefined || x <= spec.max);
    const boundsText = `${spec.min ?? '-∞'} … ${spec.max ?? '∞'}${spec.unit ? ' ' + spec.unit : ''}`;
    switch (spec.type) {
      case 'number':
      case 'integer':
        if (typeof v !== 'number' || !Number.isFinite(v)) throw new ParameterError(`${where}: expected a number`);
        if (spec.type === 'integer' && !Number.isInteger(v)) throw new ParameterError(`${where}: expected a whole number`);
        if (!inBounds(v)) throw new ParameterError(`${where}: outside the allowed range ${boundsText}`);
        break;
      case 'boolean':
        if (typeof v !== 'boolean') throw new ParameterError(`${where}: expected true or false`);
        break;
      case 'string':
        if (typeof v !== 'string') throw new ParameterError(`${where}: expected text`);
        break;
      case 'enum':
        if (typeof v !== 'string' || !spec.choices?.includes(v)) {
          throw new ParameterError(`${where}: expected one of ${spec.choices?.join(', ')}`);
        }
        break;
      case 'range': {
        const r = v as readonly number[];
        if (!Array.isArray(r) || r.length !== 2 || !r.every(Number.isFinite)) {
          throw new ParameterError(`${where}: expected MIN:MAX`);
        }
        if (!(r[0]! < r[1]!)) throw new ParameterError(`${where}: MIN must be below MAX`);
        if (!inBounds(r[0]!) || !inBounds(r[1]!)) throw new ParameterError(`${where}: outside the allowed range ${boundsText}`);
        break;
      }
      case 'list': {
        const r = v as readonly number[];
        if (!Array.isArray(r) || !r.every(Number.isFinite)) throw new ParameterError(`${where}: expected numbers`);
        if (!r.every(inBounds)) throw new ParameterError(`${where}: outside the allowed range ${boundsText}`);
        break;
      }
    }
    out[spec.name] = v;
  }
  return out;
}

/** Typed accessors for use inside operations (after validateParams). */
export const num = (p: ParamValues, k: string): number | undefined => (typeof p[k] === 'number' ? (p[k] as number) : undefined);
export const bool = (p: ParamValues, k: string): boolean => p[k] === true;
export const str = (p: ParamValues, k: string): string | undefined => (typeof p[k] === 'string' ? (p[k] as string) : undefined);
export const range = (p: ParamValues, k: string): RangeTuple | undefined =>
  Array.isArray(p[k]) && (p[k] as readonly number[]).length === 2 ? (p[k] as unknown as RangeTuple) : undefined;
export const list = (p: ParamValues, k: string): readonly number[] | undefined =>
  Array.isArray(p[k]) ? (p[k] as readonly number[]) : undefined;
type RangeTuple = readonly [number, number];
