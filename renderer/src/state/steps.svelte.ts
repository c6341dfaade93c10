/** The step list as Svelte state: every change goes through StepList so it can be undone. */
import type { ParamValue, ParamValues } from '../../../dsp/ops/types.ts';
import { StepList, type Step } from '../lib/steps.ts';

export class StepsState {
  #list = new StepList();
  #steps = $state.raw<readonly Step[]>([]);
  #version = $state(0);

  get steps() { return this.#steps; }
  get version() { return this.#version; }
  get canUndo() { this.#version; return this.#list.canUndo; }
  get canRedo() { this.#version; return this.#list.canRedo; }
  get undoLabel() { this.#version; return this.#list.undoLabel; }
  get redoLabel() { this.#version; return this.#list.redoLabel; }
  get enabled() { return this.#steps.filter((s) => s.enabled); }

  #sync = () => { this.#steps = this.#list.steps; this.#version++; };

  add = (op: string, params: ParamValues, because?: Step['because'], title = op, at?: number) => {
    const s = this.#list.add(op, params, because, `add ${title}`, at);
    this.#sync();
    return s;
  };
  setHow = (id: string, how: Parameters<StepList['setHow']>[1], label?: string) => { this.#list.setHow(id, how, label); this.#sync(); };
  remove = (id: string) => { this.#list.remove(id); this.#sync(); };
  setEnabled = (id: string, on: boolean) => { this.#list.setEnabled(id, on); this.#sync(); };
  setParam = (id: string, name: string, v: ParamValue) => { this.#list.setParam(id, name, v); this.#sync(); };
  replaceParams = (id: string, params: ParamValues, label?: string) => { this.#list.replaceParams(id, params, label); this.#sync(); };
  move = (id: string, to: number) => { this.#list.move(id, to); this.#sync(); };
  undo = () => { if (this.#list.undo()) this.#sync(); };
  redo = () => { if (this.#list.redo()) this.#sync(); };
  reset = (steps: readonly Step[]) => { this.#list.reset(steps); this.#sync(); };
}
