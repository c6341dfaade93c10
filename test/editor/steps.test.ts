/** The editor's step list: undo/redo of every change, reorder, coalesced typing. */
import { describe, expect, it } from 'vitest';
import { StepList } from '../../renderer/src/lib/steps.ts';

const ops = (l: StepList) => l.steps.map((s) => s.op);

describe('StepList', () => {
  it('undoes and redoes add, remove, switch, edit and move in order (common practice: undo stack)', () => {
    const l = new StepList();
    const a = l.add('unecho', { delaySeconds: 0.02, gain: 0.4 });
    const b = l.add('varispeed', { factor: 1.02 });
    const c = l.add('align', {});
    l.setEnabled(b.id, false);
    l.setParam(a.id, 'gain', 0.35);
    l.move(c.id, 0);
    l.remove(a.id);
    const states: string[] = [];
    const snap = () => JSON.stringify(l.steps);
    const final = snap();
    while (l.canUndo) { states.push(snap()); l.undo(); }
    expect(l.steps).toEqual([]);
    expect(states.length).toBe(7);
    for (let k = states.length - 1; k >= 0; k--) { l.redo(); expect(snap()).toBe(states[k]); }
    expect(snap()).toBe(final);
    expect(l.canRedo).toBe(false);
    expect(ops(l)).toEqual(['align', 'varispeed']);
    expect(l.steps[1]!.enabled).toBe(false);
  });

  it('reorders with move, clamping the target, and a new change clears redo', () => {
    const l = new StepList();
    const [a, b, c] = ['a', 'b', 'c'].map((o) => l.add(o, {}));
    l.move(a!.id, 2);
    expect(ops(l)).toEqual(['b', 'c', 'a']);
    l.move(a!.id, -5);
    expect(ops(l)).toEqual(['a', 'b', 'c']);
    l.move(c!.id, 1);
    expect(ops(l)).toEqual(['a', 'c', 'b']);
    l.undo();
    expect(ops(l)).toEqual(['a', 'b', 'c']);
    expect(l.canRedo).toBe(true);
    l.setEnabled(b!.id, false);
    expect(l.canRedo).toBe(false);
    l.move(b!.id, 1); // same place: no history entry
    l.undo();
    expect(l.steps.every((s) => s.enabled)).toBe(true);
  });

  it('folds successive edits of one field into one undo entry, but not edits of different fields', () => {
    const l = new StepList();
    const s = l.add('unecho', { gain: 0.4 });
    for (const g of [0.41, 0.42, 0.43]) l.setParam(s.id, 'gain', g);
    l.setParam(s.id, 'delaySeconds', 0.03);
    l.undo();
    expect(l.steps[0]!.params).toEqual({ gain: 0.43 });
    l.undo();
    expect(l.steps[0]!.params).toEqual({ gain: 0.4 });
    l.setParam(s.id, 'gain', undefined);
    expect('gain' in l.steps[0]!.params).toBe(false);
  });

  it('never mutates earlier states and keeps ids unique after a reset', () => {
    const l = new StepList();
    const s = l.add('x', { k: 1 });
    const before = l.steps;
    l.setParam(s.id, 'k', 2);
    expect(before[0]!.params).toEqual({ k: 1 });
    l.reset([{ id: 's7', op: 'y', params: {}, enabled: true }]);
    expect(l.canUndo).toBe(false);
    expect(l.add('z', {}).id).toBe('s8');
    expect(() => l.remove('s99')).toThrow(/no step s99/);
  });
});
