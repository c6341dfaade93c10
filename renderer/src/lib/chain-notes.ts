/**
 * What each step card says about time: whether its values (measured on the original recording,
 * or typed) are used as they are, carried across an earlier step that changes time (and to what),
 * measured again on the step's own input, or cannot hold where it sits. Pure; the same carrying
 * code as the renderer's pipeline (dsp/ops/timing.ts), so the card says what the render does.
 */
import { ParameterError } from '../../../dsp/errors.ts';
import {
  carryParams, chainAdvance, chainStart, changesTime, mapTime, outputDuration, stepTiming, type ChainTiming,
} from '../../../dsp/ops/timing.ts';
import type { ParamValue, SourceFacts } from '../../../dsp/ops/types.ts';
import type { StepReport } from '../worker/pipeline.ts';
import { formatTime } from './draw.ts';
import type { FindCorrection, Step } from './steps.ts';

export type NoteKind = 'as-measured' | 'carried' | 'measured-here' | 'as-given' | 'changes-time' | 'range' | 'cannot';

export interface StepNote {
  readonly kind: NoteKind;
  readonly text: string;
}

/** A lag in the unit a person reads it in (µs below a millisecond, ms below a second). */
export function formatDelay(seconds: number): string {
  const a = Math.abs(seconds);
  if (a < 1e-3) return `${(seconds * 1e6).toFixed(1)} µs`;
  if (a < 1) return `${(seconds * 1e3).toFixed(3)} ms`;
  return `${seconds.toFixed(4)} s`;
}

const show = (v: ParamValue, quantity: 'delay' | 'instant'): string => {
  const one = (x: number) => (quantity === 'delay' ? formatDelay(x) : formatTime(x));
  if (typeof v === 'number') return one(v);
  if (Array.isArray(v)) return (v as readonly number[]).map(one).join(' – ');
  return String(v);
};

/** "Delay and gain": the first label as it is, the rest in lower case. */
const list = (labels: readonly string[]) => {
  const xs = labels.map((x, i) => (i === 0 ? x : x.toLowerCase()));
  return xs.length <= 1 ? xs.join('') : `${xs.slice(0, -1).join(', ')} and ${xs[xs.length - 1]}`;
};

/**
 * Notes for every step, by id. `reports` (by step id) are the last render's, shown where the
 * carrying depends on what an earlier step measures.
 */
export function describeSteps(steps: readonly Step[], facts: SourceFacts, find: FindCorrection, reports: ReadonlyMap<string, StepReport> = new Map()): Map<string, StepNote[]> {
  const out = new Map<string, StepNote[]>();
  let chain: ChainTiming = chainStart(facts.frames / facts.sampleRateHz);
  let here = facts;
  /** A step before whose change of time is only known once it has measured. */
  let pending: string | null = null;
  for (const step of steps) {
    const notes: StepNote[] = [];
    out.set(step.id, notes);
    const op = find(step.op);
    if (!op || !step.enabled) continue;
    if (step.rangeSeconds) {
      notes.push({ kind: 'range', text: `Only ${formatTime(step.rangeSeconds[0])}–${formatTime(step.rangeSeconds[1])} of the original recording, with 10 ms crossfades at both edges; the rest passes unchanged.` });
    }
    const timed = op.params.filter((p) => p.quantity !== undefined && step.params[p.name] !== undefined);
    const measurable = op.params.filter((p) => p.measured);
    const after = chain.changedBy.length ? chain.changedBy.join(', ') : null;
    if (step.measureHere && measurable.length) {
      notes.push({ kind: 'measured-here', text: `${list(measurable.map((p) => p.label))} measured again on this step's own input${after ? ` (after ${after})` : ''} when it renders.` });
    } else if (timed.length === 0 && measurable.length && measurable.every((p) => step.params[p.name] === undefined)) {
      notes.push({ kind: 'measured-here', text: `${list(measurable.map((p) => p.label))} measured on this step's own input${after ? ` (after ${after})` : ''} when it renders.` });
    } else if (timed.length && step.basis === 'input') {
      notes.push({ kind: 'as-given', text: `Values are taken on this step's own input${after ? ` (after ${after})` : ''} and used as they are.` });
    } else if (timed.length) {
      const source = step.because ? 'Measured on the original recording' : 'Values refer to the original recording';
      if (pending) {
        const r = reports.get(step.id);
        const last = r?.carried.length ? `; last render: ${r.carried.map((c) => `${c.label.toLowerCase()} ${show(c.from, c.quantity)} → ${show(c.to, c.quantity)}`).join(', ')}` : '';
        notes.push({ kind: 'carried', text: `${source}; carried across ${pending} once it has measured${last}.` });
      } else {
        try {
          const { carried } = carryParams(op, step.params, chain, { basis: step.basis });
          if (carried.length === 0) notes.push({ kind: 'as-measured', text: `${source}; nothing before it changes time, so ${timed.length > 1 ? 'they are' : 'it is'} used as measured.` });
          else notes.push({ kind: 'carried', text: `${source}; carried across ${after}: ${carried.map((c) => `${c.label.toLowerCase()} ${show(c.from, c.quantity)} → ${show(c.to, c.quantity)}`).join(', ')}.` });
        } catch (e) {
          if (!(e instanceof ParameterError)) throw e;
          notes.push({ kind: 'cannot', text: e.message });
        }
      }
    }
    // What this step does to time, for the steps after it.
    const changes = changesTime(op, step.params, here);
    if (changes === 'depends') {
      pending = pending ?? op.title;
      notes.push({ kind: 'changes-time', text: 'Changes time by what it measures: delays and positions of the steps after it are carried across it when it renders.' });
      continue;
    }
    if (changes && !pending) {
      try {
        const range = step.rangeSeconds ? chainRange(chain, step.rangeSeconds) : null;
        const t = stepTiming(op, step.params, here, range);
        const before = here.frames / here.sampleRateHz, afterD = outputDuration(t.segments);
        const how = Math.abs(afterD / before - 1) > 1e-6 ? `length × ${(afterD / before).toFixed(4)}` : 'positions move';
        notes.push({ kind: 'changes-time', text: `Changes time (${how}): delays and positions of the steps after it are carried across it.` });
        chain = chainAdvance(chain, op.title, t);
        here = { ...here, frames: Math.round(afterD * here.sampleRateHz) };
      } catch (e) {
        if (!(e instanceof ParameterError)) throw e;
        pending = op.title;
      }
    }
  }
  return out;
}

function chainRange(chain: ChainTiming, r: readonly [number, number]): [number, number] {
  const a = mapTime(chain.segments, r[0]), b = mapTime(chain.segments, r[1]);
  return [Math.min(a, b), Math.max(a, b)];
}
