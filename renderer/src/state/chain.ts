/**
 * The editor's rules for the chain of corrections: which corrections there are (the registry's
 * specs), what stops a step from rendering, what each card says about time, where a finding's
 * correction goes, and error messages in the editor's words. Nothing of this is needed to draw
 * a recording, so it is not in the page's entry script: `Editor.loadChain()` fetches it the
 * first time a correction is added, a finding is shown or an error is reported (and once the
 * page is idle), before any step exists.
 */
import type { Editor } from './editor.svelte.ts';
import { findOperation } from '../../../dsp/ops/registry.ts';
import type { CorrectionOp, Finding, ParamValues } from '../../../dsp/ops/types.ts';
import { correctionChoices } from '../lib/operation-lists.ts';
import { describeSteps, type StepNote } from '../lib/chain-notes.ts';
import { editorWords, initialParams, stepProblems, switchMode } from '../lib/param-form.ts';
import { placementIndex } from '../lib/placement.ts';
import type { Step } from '../lib/steps.ts';

export { correctionChoices as corrections, switchMode };

const findCorrection = (name: string): CorrectionOp | undefined => {
  const o = findOperation(name);
  return o?.kind === 'correction' ? (o as CorrectionOp) : undefined;
};

/** What stops each step from rendering, checked before rendering (lib/param-form.ts), by step id. */
export function problemsOf(ed: Editor): Map<string, Map<string, string>> {
  const out = new Map<string, Map<string, string>>();
  for (const s of ed.steps.steps) {
    const op = findCorrection(s.op);
    const m = op ? stepProblems(s.op, op.params, s.params, ed.facts) : new Map([['', `“${s.op}” is not available in this version.`]]);
    for (const [k, v] of Object.entries(ed.typing)) if (k.startsWith(s.id + ':')) m.set(k.slice(s.id.length + 1), v);
    if (m.size) out.set(s.id, m);
  }
  return out;
}

/** What each step card says about time (lib/chain-notes.ts), by step id. */
export function notesOf(ed: Editor): Map<string, StepNote[]> {
  return describeSteps(ed.steps.steps, ed.facts, findCorrection, ed.reportsById);
}

/** The correction a finding suggests, when the registry has it. */
export function suggestionOf(f: Finding): { op: string; title: string; params: ParamValues } | null {
  if (!f.suggestion) return null;
  const op = findCorrection(f.suggestion.op);
  return op ? { op: op.name, title: op.title, params: f.suggestion.params } : null;
}

export function addFromFinding(ed: Editor, f: Finding): void {
  const s = suggestionOf(f);
  if (!s) return;
  // Measured on the original: it goes before a step that changes time, so it runs where it was measured.
  const all = ed.steps.steps;
  const at = placementIndex(all, findCorrection(s.op)!, s.params, ed.facts, findCorrection);
  ed.steps.add(s.op, s.params, { op: f.op, title: f.title }, s.title, at);
  const next: Step | undefined = all[at];
  ed.note(next
    ? `Added “${s.title}” before “${findCorrection(next.op)?.title ?? next.op}”: it was measured on the original recording, so it runs before the timing changes.`
    : `Added “${s.title}” with the measured settings.`);
}

export function addCorrection(ed: Editor, name: string): void {
  const op = findCorrection(name);
  if (!op) return;
  const params: ParamValues = {};
  for (const p of op.params) if (!p.cliOnly && p.default !== undefined) params[p.name] = p.default as ParamValues[string];
  ed.steps.add(op.name, initialParams(op.name, params), undefined, op.title);
}

/** An operation's message with its command-line flags replaced by the fields' names. */
export const errorWords = (message: string): string => editorWords(message, correctionChoices().flatMap((o) => o.params));
