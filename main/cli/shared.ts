/**
 * What the command line's verbs and the batch check (main/check) share: the output streams, the
 * one-line report of a failure with its exit code, an operation's parameters from its flags, and a
 * suggested correction as a ready command line. Its own module, so main/check imports it without
 * importing the command line that loads main/check.
 */
import path from 'node:path';
import { findOperation } from '../../dsp/ops/registry.ts';
import { parseParam, validateParams } from '../../dsp/ops/params.ts';
import type { ParamSpec, ParamValues } from '../../dsp/ops/types.ts';
import { BugError, CancelledError, InputError, NotFoundError, ParameterError } from '../../dsp/errors.ts';
import { interruptExitCode } from './interrupt.ts';
import { InternalFailure } from './failures.ts';

/** Writes to stdout/stderr; replaceable in tests. */
export const io = {
  out: (s: string) => void process.stdout.write(s.endsWith('\n') ? s : s + '\n'),
  err: (s: string) => void process.stderr.write(s.endsWith('\n') ? s : s + '\n'),
};
/** Turns an expected failure into one line on stderr and exit 2; anything else is a bug. */
export function reportError(verb: string, e: unknown): number {
  if (e instanceof InputError) {
    io.err(`reelwright ${verb}: ${e.oneLine()}`);
    return 2;
  }
  if (e instanceof ParameterError || e instanceof NotFoundError) {
    io.err(`reelwright ${verb}: ${e.message}`);
    return 2;
  }
  if (e instanceof CancelledError) {
    io.err(`reelwright ${verb}: ${e.message}`);
    return interruptExitCode() ?? 130;
  }
  const file = e instanceof InternalFailure ? e.file : undefined;
  const err = (e instanceof InternalFailure ? e.failure : e) as Error;
  const kind = err instanceof BugError ? 'internal error (please report)' : 'internal error';
  const message = (err?.message ?? String(err)).replace(/\s*\n\s*/g, ' ');
  io.err(`reelwright ${verb}: ${file ? `${file}: ` : ''}${kind}: ${message}${process.env.REELWRIGHT_DEBUG ? '\n' + err?.stack : ''}`);
  return 3;
}

/** Raw flags → typed, validated params of an operation (ParameterError names the flag). */
export function paramsFromFlags(specs: readonly ParamSpec[], flags: Map<string, string | boolean>): ParamValues {
  const values: ParamValues = {};
  for (const spec of specs) {
    const raw = flags.get(spec.flag);
    if (raw !== undefined) values[spec.name] = parseParam(spec, raw);
  }
  return validateParams(specs, values);
}

/** A ready command line for a suggested correction. */
export function suggestionCommand(filePath: string, s: { op: string; params: ParamValues }): string {
  const op = findOperation(s.op);
  const parsed = path.parse(filePath);
  const out = path.join(parsed.dir, `${parsed.name}.${s.op}${parsed.ext === '.wav' ? '.wav' : '.wav'}`);
  const flags: string[] = [];
  for (const [k, v] of Object.entries(s.params)) {
    const spec = op?.params.find((p) => p.name === k);
    const flag = spec?.flag ?? k;
    if (v === true) flags.push(`--${flag}`);
    else if (v === false || v === undefined) continue;
    else if (Array.isArray(v)) flags.push(`--${flag} ${v.join(spec?.type === 'range' ? ':' : ',')}`);
    else flags.push(`--${flag} ${typeof v === 'number' ? +v.toPrecision(8) : v}`);
  }
  const q = (p: string) => (/[\s'"$]/.test(p) ? `'${p.replace(/'/g, `'\\''`)}'` : p);
  return ['reelwright', s.op, q(filePath), q(out), ...flags].join(' ');
}
