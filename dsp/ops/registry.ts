/**
 * The one list of operations. The command line, the editor and the batch report are built from
 * it: adding an operation is one module in dsp/ops/ and one line here.
 */
import type { AnalysisOp, CorrectionOp, Operation } from './types.ts';
import { BugError } from '../errors.ts';
import { info } from './info.ts';
import { spectrum } from './spectrum.ts';
import { levels } from './levels.ts';
import { speed } from './speed.ts';
import { flutter } from './flutter.ts';
import { azimuth } from './azimuth.ts';
import { varispeed } from './varispeed.ts';
import { align } from './align.ts';
import { stretch } from './stretch.ts';
import { transpose } from './transpose.ts';
import { reverse } from './reverse.ts';
import { reversed } from './reversed.ts';
import { echo } from './echo.ts';
import { unecho } from './unecho.ts';
import { convert } from './convert.ts';

const list: Operation[] = [
  // Analyses (read only), in the order diagnose and the reports show them.
  info,
  spectrum,
  levels,
  speed,
  echo,
  flutter,
  azimuth,
  reversed,
  // Corrections (write a new file).
  varispeed,
  unecho,
  align,
  stretch,
  transpose,
  reverse,
  convert,
];

/** Every operation, in registry order (analyses first). A live view: it includes registered ones. */
export const operations: readonly Operation[] = list;

/**
 * Adds an operation after the built-in ones of its kind (a plug-in, or a throw-away one in a
 * test): the command line, diagnose, the editor and the batch report see it from then on.
 * Returns the function that removes it again. Names, JSON keys, report columns and gate
 * metrics must not clash with those already registered (BugError).
 */
export function registerOperation(op: Operation): () => void {
  const clash = clashes(op);
  if (clash) throw new BugError(`cannot register operation "${op.name}": ${clash}`);
  const lastOfKind = list.map((o) => o.kind).lastIndexOf(op.kind);
  list.splice(lastOfKind + 1, 0, op);
  for (const l of listeners) l();
  return () => {
    const i = list.indexOf(op);
    if (i >= 0) list.splice(i, 1);
    for (const l of listeners) l();
  };
}

const listeners = new Set<() => void>();

/** Calls `listener` whenever the list changes (for tables built from it once). */
export function onRegistryChange(listener: () => void): () => void {
  listeners.add(listener);
  return () => void listeners.delete(listener);
}

function clashes(op: Operation): string | undefined {
  if (findOperation(op.name)) return 'the name is taken';
  if (op.kind !== 'analysis') return undefined;
  const others = analyses();
  const key = others.find((a) => a.key === op.key);
  if (key) return `its JSON key "${op.key}" is ${key.name}'s`;
  const headers = new Set(others.flatMap((a) => (a.columns ?? []).map((c) => c.header)));
  const header = (op.columns ?? []).find((c) => headers.has(c.header));
  if (header) return `the report column "${header.header}" exists`;
  const ids = new Set(others.flatMap((a) => (a.metrics ?? []).map((m) => m.id)));
  const metric = (op.metrics ?? []).find((m) => ids.has(m.id));
  if (metric) return `the gate metric "${metric.id}" exists`;
  return undefined;
}

export function findOperation(name: string): Operation | undefined {
  return operations.find((op) => op.name === name);
}

export const analyses = (): AnalysisOp[] => operations.filter((op): op is AnalysisOp => op.kind === 'analysis');
export const corrections = (): CorrectionOp[] => operations.filter((op): op is CorrectionOp => op.kind === 'correction');
