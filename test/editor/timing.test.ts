/** Time through a chain of corrections (dsp/ops/timing.ts): maps, composition, carrying measured values. */
import { describe, expect, it } from 'vitest';
import { ParameterError } from '../../dsp/errors.ts';
import { findOperation } from '../../dsp/ops/registry.ts';
import {
  carryParams, chainAdvance, chainStart, changesTime, composeSegments, mapTime, outputDuration, reversedSegments,
  scaledSegments, stepTiming, timingInRange, unmapTime,
} from '../../dsp/ops/timing.ts';
import type { CorrectionOp } from '../../dsp/ops/types.ts';
import { StepList } from '../../renderer/src/lib/steps.ts';
import { placementIndex } from '../../renderer/src/lib/placement.ts';
import { describeSteps } from '../../renderer/src/lib/chain-notes.ts';

const op = (name: string) => findOperation(name) as CorrectionOp;
const find = (name: string) => { const o = findOperation(name); return o?.kind === 'correction' ? o : undefined; };
const facts = { sampleRateHz: 48000, channelCount: 2, frames: 48000 * 24 };
const D = 24;

describe('time maps', () => {
  it('compose as functions do: (g∘f)(t) = g(f(t)), and unmap inverts map (exact identities)', () => {
    // Source: definition of composition of piecewise-linear maps; checked at many points.
    const f = reversedSegments(D, 5, 9); // reverse 5–9 s
    const g = scaledSegments(D, 1.0293); // a varispeed undoing 1.0293
    const h = timingInRange({ segments: scaledSegments(4, 1.25), mapDelay: () => null }, D * 1.0293, 12, 16).segments;
    const fg = composeSegments(composeSegments(f, g), h);
    for (let t = 0; t <= D; t += 0.37) {
      const direct = mapTime(h, mapTime(g, mapTime(f, t)));
      expect(mapTime(fg, t)).toBeCloseTo(direct, 9);
      expect(unmapTime(fg, mapTime(fg, t))).toBeCloseTo(t, 9);
    }
    expect(outputDuration(fg)).toBeCloseTo(D * 1.0293 + 4 * 0.25, 9);
  });

  it('a reverse of part of the file mirrors that part and keeps the rest (definition of reversal)', () => {
    const s = reversedSegments(D, 5, 9);
    expect(mapTime(s, 2)).toBe(2);
    expect(mapTime(s, 6)).toBeCloseTo(8, 12);
    expect(mapTime(s, 12)).toBe(12);
  });

  it('a step limited to part of its input moves only what follows that part', () => {
    // Varispeed ×0.5 (twice as long) on 10–12 s of 24 s: 0–10 s stay, 10–12 s become 10–14 s, the rest +2 s.
    const t = timingInRange({ segments: scaledSegments(2, 2), mapDelay: (d) => d * 2 }, D, 10, 12);
    expect(mapTime(t.segments, 5)).toBe(5);
    expect(mapTime(t.segments, 11)).toBeCloseTo(12, 12);
    expect(mapTime(t.segments, 20)).toBeCloseTo(22, 12);
    // A lag is not one lag across the whole any more.
    expect(t.mapDelay(0.012)).toBeNull();
  });
});

describe('what each correction does to time', () => {
  it('varispeed by f divides instants and lags by f (ARCHITECTURE.md: factor = played ÷ recorded speed)', () => {
    // undo 1.0293 is factor 1/1.0293: 2.93 % longer, a 12.047 ms reflection becomes 12.400 ms.
    const t = op('varispeed').timing!({ undo: 1.0293 }, facts);
    expect(outputDuration(t.segments)).toBeCloseTo(D * 1.0293, 9);
    expect(t.mapDelay(0.012047)).toBeCloseTo(0.012047 * 1.0293, 12);
    expect(changesTime(op('varispeed'), { fromHum: '60' }, facts)).toBe('depends');
  });

  it('stretch scales instants but does not carry a lag; reverse of everything negates it; echo and align keep time', () => {
    const s = op('stretch').timing!({ ratio: 1.25 }, facts);
    expect(outputDuration(s.segments)).toBeCloseTo(30, 9);
    expect(s.mapDelay(0.012)).toBeNull();
    const r = op('reverse').timing!({}, facts);
    expect(mapTime(r.segments, 1)).toBeCloseTo(23, 12);
    expect(r.mapDelay(0.012)).toBeCloseTo(-0.012, 15); // a post-echo played backwards is a pre-echo
    expect(op('reverse').timing!({ channels: [2] }, facts).mapDelay(0.012)).toBeNull();
    expect(changesTime(op('unecho'), { delaySeconds: 0.012, gain: 0.4 }, facts)).toBe(false);
    expect(changesTime(op('align'), {}, facts)).toBe(false);
    expect(changesTime(op('transpose'), { semitones: 2 }, facts)).toBe(true); // lags do not survive a phase vocoder
  });
});

describe('carrying measured values to where a step sits', () => {
  const unecho = { delaySeconds: 0.012047, gain: 0.406 };
  const after = (name: string, resolved: Record<string, unknown>) =>
    chainAdvance(chainStart(D), op(name).title, stepTiming(op(name), resolved as never, facts));

  it('scales a delay after a varispeed, leaves a gain alone, and keeps the input basis as given', () => {
    const chain = after('varispeed', { factor: 1 / 1.0293 });
    const { params, carried } = carryParams(op('unecho'), unecho, chain);
    expect(params.delaySeconds).toBeCloseTo(0.012047 * 1.0293, 12);
    expect(params.gain).toBe(0.406);
    expect(carried.map((c) => c.name)).toEqual(['delaySeconds']);
    expect(carryParams(op('unecho'), unecho, chain, { basis: 'input' }).params.delaySeconds).toBe(0.012047);
    // A search range is a range of lags: both ends scale.
    const ranged = carryParams(op('unecho'), { rangeSeconds: [0.01, 0.015] }, chain).params.rangeSeconds as number[];
    expect(ranged[0]).toBeCloseTo(0.01 * 1.0293, 12);
    expect(ranged[1]).toBeCloseTo(0.015 * 1.0293, 12);
  });

  it('measuring here leaves out what the step measures itself', () => {
    const { params } = carryParams(op('unecho'), unecho, after('varispeed', { factor: 0.97 }), { measureHere: true });
    expect(params).toEqual({});
  });

  it('refuses to carry a lag through a stretch, naming the step that prevents it', () => {
    expect(() => carryParams(op('unecho'), unecho, after('stretch', { ratio: 1.25 }))).toThrow(ParameterError);
    expect(() => carryParams(op('unecho'), unecho, after('stretch', { ratio: 1.25 }))).toThrow(/does not hold after Time-stretch/);
  });

  it('moves positions (a reverse range) through the time map', () => {
    const { params } = carryParams(op('reverse'), { fromSeconds: 10, toSeconds: 12 }, after('varispeed', { factor: 0.5 }));
    expect(params.fromSeconds).toBeCloseTo(20, 12);
    expect(params.toSeconds).toBeCloseTo(24, 12);
  });
});

describe('placing a finding’s correction and saying what happens on the card', () => {
  it('puts a measured echo or channel delay before a varispeed, and a varispeed at the end', () => {
    const l = new StepList();
    const v = l.add('varispeed', { undo: 1.0293 }, { op: 'speed', title: 'Played 2.93 % fast' });
    const at = placementIndex(l.steps, op('unecho'), unecho(), facts, find);
    expect(at).toBe(0);
    l.add('unecho', unecho(), { op: 'echo', title: 'Reflection' }, 'add', at);
    l.add('align', { delaySeconds: 12e-6 }, { op: 'azimuth', title: 'Delay' }, 'add', placementIndex(l.steps, op('align'), { delaySeconds: 12e-6 }, facts, find));
    expect(l.steps.map((s) => s.op)).toEqual(['unecho', 'align', 'varispeed']);
    expect(placementIndex(l.steps, op('varispeed'), { undo: 1.0293 }, facts, find)).toBe(3);
    // A switched-off varispeed changes nothing: the echo step goes at the end.
    l.setEnabled(v.id, false);
    expect(placementIndex(l.steps, op('unecho'), unecho(), facts, find)).toBe(3);
    function unecho() { return { delaySeconds: 0.012047, gain: 0.406 }; }
  });

  it('the card says whether values are used as measured, carried (and to what), measured here, or cannot hold', () => {
    const l = new StepList();
    l.add('varispeed', { undo: 1.0293 });
    const e = l.add('unecho', { delaySeconds: 0.012047, gain: 0.406 }, { op: 'echo', title: 'Reflection' });
    const a = l.add('align', {});
    let notes = describeSteps(l.steps, facts, find);
    expect(notes.get(l.steps[0]!.id)!.map((n) => n.kind)).toEqual(['changes-time']);
    expect(notes.get(e.id)![0]!.text).toBe('Measured on the original recording; carried across Varispeed: delay 12.047 ms → 12.400 ms.');
    expect(notes.get(a.id)![0]!.kind).toBe('measured-here');
    l.move(e.id, 0);
    notes = describeSteps(l.steps, facts, find);
    expect(notes.get(e.id)![0]!.kind).toBe('as-measured');
    l.add('stretch', { ratio: 1.2 }, undefined, 'add', 0);
    notes = describeSteps(l.steps, facts, find);
    expect(notes.get(e.id)![0]!.kind).toBe('cannot');
    l.setHow(e.id, { measureHere: true });
    notes = describeSteps(l.steps, facts, find);
    expect(notes.get(e.id)![0]!.text).toMatch(/^Delay and gain measured again on this step's own input \(after Time-stretch\)/);
  });
});
