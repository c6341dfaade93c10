/**
 * Time through a chain of corrections. A correction that changes time (varispeed, time-stretch,
 * reverse) moves every later instant and may change every lag within the sound; a value measured on
 * the original recording (a reflection's delay, the delay between the channels, a position) is only
 * valid after such a step once it is carried across it. Each correction describes what it does to
 * time (`CorrectionOp.timing`, a piecewise-linear map and a rule for lags); this module composes
 * those descriptions along a chain and carries parameters marked with a `quantity` through them.
 *
 * Pure functions over plain data: the editor's page, its workers and the tests share them.
 */
import { ParameterError } from '../errors.ts';
import type { CorrectionOp, ParamSpec, ParamValue, ParamValues, SourceFacts, StepTiming, TimeSegment } from './types.ts';
import { along, mapTime, outputDuration, unmapTime } from './time-map.ts';

export { mapTime, outputDuration, unmapTime };

/** The map of a step that keeps time, over an input of `durationSeconds`. */
export function identitySegments(durationSeconds: number): TimeSegment[] {
  return [{ inStart: 0, inEnd: durationSeconds, outStart: 0, outEnd: durationSeconds }];
}

/** Every instant × `scale` (varispeed by 1/scale, a stretch by scale). */
export function scaledSegments(durationSeconds: number, scale: number): TimeSegment[] {
  return [{ inStart: 0, inEnd: durationSeconds, outStart: 0, outEnd: durationSeconds * scale }];
}

/** Reversal of [fromSeconds, toSeconds) of an input of `durationSeconds`; the rest keeps its place. */
export function reversedSegments(durationSeconds: number, fromSeconds: number, toSeconds: number): TimeSegment[] {
  const out: TimeSegment[] = [];
  if (fromSeconds > 0) out.push({ inStart: 0, inEnd: fromSeconds, outStart: 0, outEnd: fromSeconds });
  out.push({ inStart: fromSeconds, inEnd: toSeconds, outStart: toSeconds, outEnd: fromSeconds });
  if (toSeconds < durationSeconds) out.push({ inStart: toSeconds, inEnd: durationSeconds, outStart: toSeconds, outEnd: durationSeconds });
  return out;
}

/** The map of `first` followed by `then` (then's input is first's output). */
export function composeSegments(first: readonly TimeSegment[], then: readonly TimeSegment[]): TimeSegment[] {
  const out: TimeSegment[] = [];
  const cuts = then.map((s) => s.inStart).concat(then.length ? [then[then.length - 1]!.inEnd] : []);
  for (const s of first) {
    if (!(s.inEnd > s.inStart)) continue;
    const y0 = s.outStart, y1 = s.outEnd;
    const lo = Math.min(y0, y1), hi = Math.max(y0, y1);
    const inner = cuts.filter((c) => c > lo && c < hi).sort((a, b) => (y1 >= y0 ? a - b : b - a));
    const ys = [y0, ...inner, y1];
    const xAt = (y: number) => (y1 === y0 ? s.inStart : s.inStart + ((y - y0) * (s.inEnd - s.inStart)) / (y1 - y0));
    for (let i = 0; i + 1 < ys.length; i++) {
      const ya = ys[i]!, yb = ys[i + 1]!;
      // The piece of `then` that holds this stretch: the one containing its middle.
      const mid = (ya + yb) / 2;
      const t = then.find((x) => mid >= x.inStart && mid < x.inEnd) ?? (mid < (then[0]?.inStart ?? 0) ? then[0] : then[then.length - 1]);
      const f = (y: number) => (t ? along(t, y) : y);
      out.push({ inStart: xAt(ya), inEnd: xAt(yb), outStart: f(ya), outEnd: f(yb) });
    }
  }
  return out;
}

/** What a chain has done to time so far, seen from the original recording. */
export interface ChainTiming {
  /** Original seconds → seconds at this point of the chain. */
  readonly segments: readonly TimeSegment[];
  /** A lag measured on the original, as it is at this point (null: it does not survive as one lag). */
  mapDelay(delaySeconds: number): number | null;
  /** Titles of the steps so far that changed time (for the step cards). */
  readonly changedBy: readonly string[];
}

/**
 * The chain before its first step. A chain rendered over part of the recording starts at
 * `offsetSeconds` of the original (its input's 0 s).
 */
export function chainStart(durationSeconds: number, offsetSeconds = 0): ChainTiming {
  return {
    segments: [{ inStart: offsetSeconds, inEnd: offsetSeconds + durationSeconds, outStart: 0, outEnd: durationSeconds }],
    mapDelay: (d) => d,
    changedBy: [],
  };
}

const sameMap = (a: readonly TimeSegment[], b: readonly TimeSegment[]) =>
  a.length === b.length && a.every((s, i) => [s.inStart - b[i]!.inStart, s.inEnd - b[i]!.inEnd, s.outStart - b[i]!.outStart, s.outEnd - b[i]!.outEnd].every((d) => Math.abs(d) < 1e-9));

/** A step's timing when it is limited to [from, to) of its input (seconds): the rest keeps its place. */
export function timingInRange(inner: StepTiming, inputDurationSeconds: number, from: number, to: number): StepTiming {
  const L = to - from;
  const innerOut = outputDuration(inner.segments);
  const segments: TimeSegment[] = [];
  if (from > 0) segments.push({ inStart: 0, inEnd: from, outStart: 0, outEnd: from });
  for (const s of inner.segments) {
    segments.push({ inStart: from + s.inStart, inEnd: from + s.inEnd, outStart: from + s.outStart, outEnd: from + s.outEnd });
  }
  const shift = innerOut - L;
  if (to < inputDurationSeconds) segments.push({ inStart: to, inEnd: inputDurationSeconds, outStart: to + shift, outEnd: inputDurationSeconds + shift });
  // A lag survives only when the step leaves it unchanged (it is kept outside the range).
  return { segments, mapDelay: (d) => { const m = inner.mapDelay(d); return m !== null && Math.abs(m - d) <= 1e-12 * Math.max(1, Math.abs(d)) ? d : null; } };
}

/** The timing of one step: the operation's own, or time kept. */
export function stepTiming(op: CorrectionOp, resolved: ParamValues, facts: SourceFacts, rangeSeconds?: readonly [number, number] | null): StepTiming {
  const duration = facts.frames / facts.sampleRateHz;
  if (rangeSeconds) {
    const [a, b] = rangeSeconds;
    const inner = op.timing
      ? op.timing(resolved, { ...facts, frames: Math.round((b - a) * facts.sampleRateHz) })
      : { segments: identitySegments(b - a), mapDelay: (d: number) => d };
    return timingInRange(inner, duration, a, b);
  }
  return op.timing ? op.timing(resolved, facts) : { segments: identitySegments(duration), mapDelay: (d) => d };
}

/** The chain after one more step. */
export function chainAdvance(chain: ChainTiming, title: string, timing: StepTiming): ChainTiming {
  const segments = composeSegments(chain.segments, timing.segments);
  const before = chain.mapDelay;
  const changes = !sameMap(chain.segments, segments) || [1e-5, 0.01, 1].some((d) => timing.mapDelay(d) !== d);
  return {
    segments,
    mapDelay: (d) => { const m = before(d); return m === null ? null : timing.mapDelay(m); },
    changedBy: changes ? [...chain.changedBy, title] : chain.changedBy,
  };
}

/** One value carried from the original to where the step runs. */
export interface Carried {
  readonly name: string;
  readonly label: string;
  readonly quantity: 'delay' | 'instant';
  readonly from: ParamValue;
  readonly to: ParamValue;
}

/**
 * The parameters a step gets where it sits. `basis` says what its values refer to: 'original' (the
 * original recording's time: measured there, or read off its time line) or 'input' (the step's own
 * input: used as they are). `measureHere` leaves out what the operation measures itself, so it
 * measures on its own input. Throws ParameterError, naming the step and the step that prevents it,
 * when a value cannot be carried (a lag through a time-stretch or a partial reverse).
 */
export function carryParams(
  op: CorrectionOp,
  params: ParamValues,
  chain: ChainTiming,
  options: { basis?: 'original' | 'input'; measureHere?: boolean } = {},
): { params: ParamValues; carried: Carried[] } {
  const out: ParamValues = { ...params };
  const carried: Carried[] = [];
  if (options.measureHere) for (const s of op.params) if (s.measured) delete out[s.name];
  if ((options.basis ?? 'original') === 'input') return { params: out, carried };
  const after = chain.changedBy.length ? ` after ${chain.changedBy.join(', ')}` : '';
  for (const spec of op.params) {
    const v = out[spec.name];
    if (!spec.quantity || v === undefined) continue;
    const one = (x: number): number => {
      if (spec.quantity === 'instant') return mapTime(chain.segments, x);
      const m = chain.mapDelay(x);
      if (m === null) {
        throw new ParameterError(
          `${op.title}: its ${spec.label.toLowerCase()} was measured on the original recording and does not hold${after}; ` +
            `measure it on this step's input, or move the step before ${chain.changedBy[chain.changedBy.length - 1] ?? 'that step'}`,
        );
      }
      return m;
    };
    let to: ParamValue;
    if (typeof v === 'number') to = one(v);
    else if (Array.isArray(v) && v.length === 2 && spec.type === 'range') {
      const a = one(v[0]!), b = one(v[1]!);
      to = [Math.min(a, b), Math.max(a, b)] as const;
    } else if (Array.isArray(v)) to = (v as readonly number[]).map(one);
    else continue;
    const changed = Array.isArray(to) ? (to as readonly number[]).some((x, i) => x !== (v as readonly number[])[i]) : to !== v;
    if (changed) carried.push({ name: spec.name, label: spec.label, quantity: spec.quantity, from: v, to });
    out[spec.name] = to;
  }
  return { params: out, carried };
}

/** The step's parameters that depend on time (what the step card explains). */
export const timeParams = (op: CorrectionOp): ParamSpec[] => op.params.filter((p) => p.quantity !== undefined);

/** Whether the operation changes time for these parameters (known before rendering), or 'depends' on what it measures. */
export function changesTime(op: CorrectionOp, params: ParamValues, facts: SourceFacts): boolean | 'depends' {
  if (!op.timing) return false;
  try {
    const t = op.timing(params, facts);
    const d = facts.frames / facts.sampleRateHz;
    return !sameMap(t.segments, identitySegments(d)) || [1e-5, 0.01, 1].some((x) => t.mapDelay(x) !== x);
  } catch {
    return 'depends';
  }
}
