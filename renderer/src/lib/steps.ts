/**
 * The list of corrections ("steps") as plain data, with undo/redo of every change. Pure: the
 * editor wraps it in a Svelte state class (steps.svelte.ts); tests use it directly.
 */
import type { CorrectionOp, ParamValue, ParamValues } from '../../../dsp/ops/types.ts';

export interface Step {
  /** Stable id within a session (`s1`, `s2`, …). */
  readonly id: string;
  /** Correction verb from the registry. */
  readonly op: string;
  readonly params: ParamValues;
  readonly enabled: boolean;
  /** The finding that suggested it, kept for the compare view ("echo gain 0.42 → 0.01"). */
  readonly because?: { readonly op: string; readonly title: string };
  /**
   * What its delays and positions refer to (absent = 'original'): the original recording's time
   * (measured there, or read off its time line; carried across earlier steps that change time) or
   * 'input', the step's own input.
   */
  readonly basis?: 'original' | 'input';
  /** Measure what the step can measure on its own input instead of using the values given. */
  readonly measureHere?: boolean;
  /** Only this part of the original recording (seconds), crossfaded at its edges; absent = all. */
  readonly rangeSeconds?: readonly [number, number];
}

/** Looks up a correction by name (the registry, or a test's own list). */
export type FindCorrection = (name: string) => CorrectionOp | undefined;

export interface Change {
  /** Plain words for the undo/redo buttons ("add Remove echo"). */
  readonly label: string;
  readonly before: readonly Step[];
  readonly after: readonly Step[];
}

export class StepList {
  #steps: readonly Step[] = [];
  #undo: Change[] = [];
  #redo: Change[] = [];
  #nextId = 1;

  constructor(initial: readonly Step[] = [], private readonly limit = 500) {
    this.#steps = initial;
    this.#nextId = 1 + initial.reduce((m, s) => Math.max(m, Number(s.id.slice(1)) || 0), 0);
  }

  get steps(): readonly Step[] {
    return this.#steps;
  }
  get canUndo(): boolean {
    return this.#undo.length > 0;
  }
  get canRedo(): boolean {
    return this.#redo.length > 0;
  }
  get undoLabel(): string | null {
    return this.#undo.at(-1)?.label ?? null;
  }
  get redoLabel(): string | null {
    return this.#redo.at(-1)?.label ?? null;
  }

  #apply(label: string, after: readonly Step[]): void {
    this.#undo.push({ label, before: this.#steps, after });
    if (this.#undo.length > this.limit) this.#undo.shift();
    this.#redo = [];
    this.#steps = after;
  }

  #index(id: string): number {
    const i = this.#steps.findIndex((s) => s.id === id);
    if (i < 0) throw new Error(`no step ${id}`);
    return i;
  }

  /** Adds a step at `at` (default: the end). */
  add(op: string, params: ParamValues, because?: Step['because'], label = `add ${op}`, at = this.#steps.length): Step {
    const step: Step = { id: `s${this.#nextId++}`, op, params: { ...params }, enabled: true, ...(because ? { because } : {}) };
    const k = Math.max(0, Math.min(this.#steps.length, Math.round(at)));
    this.#apply(label, [...this.#steps.slice(0, k), step, ...this.#steps.slice(k)]);
    return step;
  }

  /** Changes how a step's values are taken: what they refer to, measuring on its input, its range. */
  setHow(id: string, how: { basis?: Step['basis']; measureHere?: boolean; rangeSeconds?: Step['rangeSeconds'] | null }, label = 'change step'): void {
    const i = this.#index(id);
    const old = this.#steps[i]!;
    const next: Record<string, unknown> = { ...old };
    for (const [k, v] of Object.entries(how)) {
      if (v === undefined) continue;
      if (v === null || v === false || (k === 'basis' && v === 'original')) delete next[k];
      else next[k] = v;
    }
    if (JSON.stringify(next) === JSON.stringify(old)) return;
    this.#apply(label, this.#steps.map((s, k) => (k === i ? (next as unknown as Step) : s)));
  }

  remove(id: string, label = 'remove step'): void {
    const i = this.#index(id);
    this.#apply(label, this.#steps.filter((_, k) => k !== i));
  }

  setEnabled(id: string, enabled: boolean): void {
    const i = this.#index(id);
    if (this.#steps[i]!.enabled === enabled) return;
    this.#apply(enabled ? 'switch step on' : 'switch step off', this.#steps.map((s, k) => (k === i ? { ...s, enabled } : s)));
  }

  setParam(id: string, name: string, value: ParamValue): void {
    const i = this.#index(id);
    const old = this.#steps[i]!;
    if (Object.is(old.params[name], value)) return;
    const params: ParamValues = { ...old.params };
    if (value === undefined) delete params[name];
    else params[name] = value;
    const last = this.#undo.at(-1);
    const label = `change ${name}`;
    const after = this.#steps.map((s, k) => (k === i ? { ...s, params } : s));
    // Typing into one field makes one undo entry, not one per keystroke.
    if (last && last.label === label && last.after === this.#steps && this.#redo.length === 0 && last.after[i]?.id === id) {
      this.#undo[this.#undo.length - 1] = { label, before: last.before, after };
      this.#steps = after;
      return;
    }
    this.#apply(label, after);
  }

  /** Replaces all of a step's values at once (choosing another way of setting them): one undo entry. */
  replaceParams(id: string, params: ParamValues, label = 'change the way it is set'): void {
    const i = this.#index(id);
    const old = this.#steps[i]!;
    if (JSON.stringify(old.params) === JSON.stringify(params)) return;
    this.#apply(label, this.#steps.map((s, k) => (k === i ? { ...s, params: { ...params } } : s)));
  }

  /** Moves a step to position `to` (0-based, clamped). */
  move(id: string, to: number): void {
    const from = this.#index(id);
    const target = Math.max(0, Math.min(this.#steps.length - 1, Math.round(to)));
    if (from === target) return;
    const next = [...this.#steps];
    const [s] = next.splice(from, 1);
    next.splice(target, 0, s!);
    this.#apply('move step', next);
  }

  undo(): boolean {
    const c = this.#undo.pop();
    if (!c) return false;
    this.#redo.push(c);
    this.#steps = c.before;
    return true;
  }

  redo(): boolean {
    const c = this.#redo.pop();
    if (!c) return false;
    this.#undo.push(c);
    this.#steps = c.after;
    return true;
  }

  /** Replaces everything (opening a session); clears the history. */
  reset(steps: readonly Step[]): void {
    this.#steps = steps;
    this.#undo = [];
    this.#redo = [];
    this.#nextId = 1 + steps.reduce((m, s) => Math.max(m, Number(s.id.slice(1)) || 0), 0);
  }
}
