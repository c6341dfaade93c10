/**
 * Parameter forms in the editor's words: on-screen names and units (never command-line flags),
 * delays shown in ms or µs, every field checked as it is typed, and the checks between fields
 * that the operations make when they render (a gain without a delay, two ways of setting the
 * speed at once, a range that ends before it starts) made beforehand, so a card can say what
 * is wrong before anything renders. Pure: the step cards and tests use it.
 */
import type { ParamSpec, ParamValue, ParamValues, SourceFacts } from '../../../dsp/ops/types.ts';

/** How a field shows its number: the spec's unit, or a smaller one for delays (× scale). */
export interface Display {
  readonly unit: string;
  /** Shown value = stored value × scale. */
  readonly scale: number;
}

/** Delays are shown in ms (µs where the whole range is under 50 ms: the delay between channels). */
export function displayOf(spec: ParamSpec): Display {
  if (spec.unit === 's' && spec.quantity === 'delay') {
    const big = Math.max(Math.abs(spec.min ?? 0), Math.abs(spec.max ?? 1));
    return big <= 0.05 ? { unit: 'µs', scale: 1e6 } : { unit: 'ms', scale: 1e3 };
  }
  return { unit: spec.unit ?? '', scale: 1 };
}

/** A number as a person types it: at most 6 significant digits, a minus sign, no exponent for ordinary sizes. */
export function showNumber(v: number): string {
  if (!Number.isFinite(v)) return '';
  const r = Number(v.toPrecision(6));
  return String(r);
}

const fmt = (v: number, d: Display) => `${showNumber(v * d.scale).replace('-', '−')}${d.unit ? ' ' + d.unit : ''}`;

/** "between −60 000 and 60 000 ms", in the field's own unit. */
function boundsWords(spec: ParamSpec, d: Display): string {
  if (spec.min !== undefined && spec.max !== undefined) return `between ${fmt(spec.min, d)} and ${fmt(spec.max, d)}`;
  if (spec.min !== undefined) return `at least ${fmt(spec.min, d)}`;
  if (spec.max !== undefined) return `at most ${fmt(spec.max, d)}`;
  return '';
}

/** Accepts what a person types: decimals with a point or comma, a leading − or +, and a fraction such as 160/147. */
export function parseTyped(text: string): number {
  const t = text.trim().replace(/^[−–]/, '-').replace(',', '.');
  if (t === '') return NaN;
  const frac = /^([-+]?[\d.]+)\/([\d.]+)$/.exec(t);
  if (frac) return Number(frac[1]) / Number(frac[2]);
  if (!/^[-+]?(\d+\.?\d*|\.\d+)(e[-+]?\d+)?$/i.test(t)) return NaN;
  return Number(t);
}

export interface FieldResult {
  /** The value to store (undefined = left empty: automatic / measured / default). */
  readonly value: ParamValue;
  /** What is wrong, in words, or null. */
  readonly message: string | null;
}

/** Checks one number as typed (in the field's display unit) against the spec; the message names no flag. */
export function checkNumber(spec: ParamSpec, text: string): FieldResult {
  const d = displayOf(spec);
  if (text.trim() === '') return { value: undefined, message: null };
  const shown = parseTyped(text);
  if (!Number.isFinite(shown)) return { value: undefined, message: 'Not a number.' };
  const v = shown / d.scale;
  if (spec.type === 'integer' && !Number.isInteger(shown)) return { value: undefined, message: 'A whole number, please.' };
  if ((spec.min !== undefined && v < spec.min - 1e-12) || (spec.max !== undefined && v > spec.max + 1e-12)) {
    return { value: undefined, message: `Must be ${boundsWords(spec, d)}.` };
  }
  return { value: v, message: null };
}

/** Checks a MIN–MAX pair as typed. */
export function checkRange(spec: ParamSpec, loText: string, hiText: string): FieldResult & { loBad?: boolean; hiBad?: boolean } {
  if (loText.trim() === '' && hiText.trim() === '') return { value: undefined, message: null };
  const lo = checkNumber({ ...spec, type: 'number' }, loText), hi = checkNumber({ ...spec, type: 'number' }, hiText);
  if (loText.trim() === '' || hiText.trim() === '') return { value: undefined, message: 'Give both ends, or leave both empty.', loBad: loText.trim() === '', hiBad: hiText.trim() === '' };
  if (lo.message) return { value: undefined, message: `From: ${lo.message}`, loBad: true };
  if (hi.message) return { value: undefined, message: `To: ${hi.message}`, hiBad: true };
  if (!((lo.value as number) < (hi.value as number))) return { value: undefined, message: 'The lower end must be below the upper end.', loBad: true, hiBad: true };
  return { value: [lo.value as number, hi.value as number], message: null };
}

/** Checks a comma-separated list of whole numbers (channels). */
export function checkList(spec: ParamSpec, text: string, facts?: SourceFacts): FieldResult {
  if (text.trim() === '') return { value: undefined, message: null };
  const parts = text.split(/[,;\s]+/).filter(Boolean).map(parseTyped);
  if (parts.some((x) => !Number.isFinite(x))) return { value: undefined, message: 'Numbers separated by commas, please.' };
  if (parts.some((x) => !Number.isInteger(x))) return { value: undefined, message: 'Channel numbers are whole numbers.' };
  const d = displayOf(spec);
  if (parts.some((x) => (spec.min !== undefined && x < spec.min) || (spec.max !== undefined && x > spec.max))) return { value: undefined, message: `Each must be ${boundsWords(spec, d)}.` };
  if (facts && parts.some((x) => x > facts.channelCount)) return { value: undefined, message: `This recording has ${facts.channelCount} channel${facts.channelCount === 1 ? '' : 's'}.` };
  return { value: parts, message: null };
}

/** Linear gain in dB (20·log10|g|), with the sign in words. */
export function gainWords(g: number): string {
  if (g === 0) return '−∞ dB';
  const db = 20 * Math.log10(Math.abs(g));
  return `${db.toFixed(1).replace('-', '−')} dB${g < 0 ? ', inverted' : ''}`;
}

/** Replaces command-line flags in an operation's text by the editor's names ("--delay 0" → "Delay 0"). */
export function editorWords(text: string, specs: readonly ParamSpec[]): string {
  const byFlag = new Map(specs.map((s) => [s.flag, s]));
  return text
    .replace(/--([a-z][a-z0-9-]*)(\/--[a-z][a-z0-9-]*)*/g, (m) => m.split('/').map((f) => {
      const s = byFlag.get(f.replace(/^--/, ''));
      return s ? `“${s.label}”` : f.replace(/^--/, '');
    }).join(', '))
    .replace(/ MIN:MAX/g, ' (from … to)');
}

/** One way of setting a correction's main value, when it has several that exclude each other. */
export interface Mode {
  readonly id: string;
  readonly label: string;
  /** The parameters this way uses (the others of `exclusive` are cleared when it is chosen). */
  readonly params: readonly string[];
  /** Values set when the way is chosen. */
  readonly fixed?: ParamValues;
}

/** Corrections whose settings come in ways that exclude each other. */
export const MODES: Readonly<Record<string, { readonly exclusive: readonly string[]; readonly modes: readonly Mode[]; readonly initial: string }>> = {
  varispeed: {
    // Added by hand, it measures the speed and follows its drift until told otherwise.
    initial: 'drift',
    exclusive: ['factor', 'undo', 'semitones', 'cents', 'fromHum', 'fromTone', 'followCurve'],
    modes: [
      { id: 'undo', label: 'Undo a measured speed', params: ['undo'] },
      { id: 'factor', label: 'Play faster or slower', params: ['factor'] },
      { id: 'pitch', label: 'By musical interval', params: ['semitones', 'cents'] },
      { id: 'hum', label: 'Measure from mains hum', params: ['fromHum', 'followCurve'], fixed: { fromHum: '50' } },
      { id: 'tone', label: 'Measure from a reference tone', params: ['fromTone', 'followCurve'], fixed: { fromTone: 1000 } },
      { id: 'drift', label: 'Follow the measured drift', params: ['followCurve'], fixed: { followCurve: true } },
    ],
  },
};

/** The values of a correction added by hand: its defaults, in its first way of being set. */
export function initialParams(op: string, defaults: ParamValues): ParamValues {
  const m = MODES[op];
  return m ? switchMode(op, defaults, m.initial) : defaults;
}

/** Which way the current values use (the first whose parameters hold every value given). */
export function modeOf(op: string, params: ParamValues, chosen?: string): Mode | null {
  const m = MODES[op];
  if (!m) return null;
  const given = m.exclusive.filter((k) => params[k] !== undefined && params[k] !== false);
  // The way last chosen stays while its fields are empty or hold only its own values.
  const picked = chosen ? m.modes.find((x) => x.id === chosen) : undefined;
  if (picked && given.every((k) => picked.params.includes(k))) return picked;
  // A way fits when it holds every value given and the values it sets itself are there.
  const fits = m.modes.filter((x) => given.every((k) => x.params.includes(k)) && Object.keys(x.fixed ?? {}).every((k) => params[k] !== undefined && params[k] !== false));
  return given.length ? fits[0] ?? null : m.modes[0]!;
}

/** The values after choosing another way: the other ways' values are cleared, its own set. */
export function switchMode(op: string, params: ParamValues, id: string): ParamValues {
  const m = MODES[op];
  const mode = m?.modes.find((x) => x.id === id);
  if (!m || !mode) return params;
  const out: ParamValues = {};
  for (const [k, v] of Object.entries(params)) if (!m.exclusive.includes(k) || mode.params.includes(k)) out[k] = v;
  for (const [k, v] of Object.entries(mode.fixed ?? {})) if (out[k] === undefined) out[k] = v;
  return out;
}

/** The parameters a card shows: for a correction with ways, only the chosen way's and the shared ones. */
export function visibleParams(op: string, specs: readonly ParamSpec[], params: ParamValues, chosen?: string): ParamSpec[] {
  const m = MODES[op];
  const shown = specs.filter((s) => !s.cliOnly);
  if (!m) return shown;
  const mode = modeOf(op, params, chosen);
  return shown.filter((s) => !m.exclusive.includes(s.name) || (mode?.params.includes(s.name) ?? false));
}

/**
 * What stops a step from rendering, by parameter name ('' for the step as a whole), checked
 * before it renders: the rules each correction applies when it starts, in the editor's words.
 */
export function stepProblems(op: string, specs: readonly ParamSpec[], params: ParamValues, facts: SourceFacts): Map<string, string> {
  const out = new Map<string, string>();
  const n = (k: string) => (typeof params[k] === 'number' ? (params[k] as number) : undefined);
  const spec = (k: string) => specs.find((s) => s.name === k);
  const durationSeconds = facts.frames / facts.sampleRateHz;
  // Bounds and types of every value (a session or an old value may be out of range).
  for (const s of specs) {
    const v = params[s.name];
    if (v === undefined || s.cliOnly) continue;
    if ((s.type === 'number' || s.type === 'integer') && typeof v === 'number') {
      const r = checkNumber(s, showNumber(v * displayOf(s).scale));
      if (r.message) out.set(s.name, r.message);
    }
  }
  switch (op) {
    case 'unecho': {
      const delay = n('delaySeconds'), gain = n('gain');
      if (delay !== undefined && Math.abs(delay) * facts.sampleRateHz < 1) {
        out.set('delaySeconds', delay === 0 ? 'A delay of 0 is the direct sound itself: there is no echo to remove.' : `Shorter than one sample (${(1000 / facts.sampleRateHz).toFixed(4)} ms).`);
      } else if (delay !== undefined && Math.abs(delay) >= durationSeconds) {
        out.set('delaySeconds', `Longer than the recording (${durationSeconds.toFixed(3)} s).`);
      }
      if (gain !== undefined && !(Math.abs(gain) < 1)) out.set('gain', 'An echo’s gain lies strictly between −1 and 1 (at ±1 its removal does not settle).');
      else if (gain !== undefined && delay === undefined) out.set('gain', 'A gain needs its delay: give the delay too, or leave both empty to measure them.');
      const ch = n('channel');
      if (ch !== undefined && ch > facts.channelCount) out.set('channel', `This recording has ${facts.channelCount} channel${facts.channelCount === 1 ? '' : 's'}.`);
      break;
    }
    case 'varispeed': {
      const explicit = ['factor', 'undo', 'semitones', 'cents'].filter((k) => params[k] !== undefined);
      const measured = ['fromHum', 'fromTone'].filter((k) => params[k] !== undefined).concat(params.followCurve === true ? ['followCurve'] : []);
      if (explicit.length && measured.length) out.set('', `“${explicit.map((k) => spec(k)?.label).join('”, “')}” set the speed and “${measured.map((k) => spec(k)?.label).join('”, “')}” measure it: choose one way.`);
      else if (!explicit.length && !measured.length) out.set('', 'Say how to change the speed: give a value for the way chosen.');
      if (params.fromHum !== undefined && params.fromTone !== undefined) out.set('fromTone', 'Hum or tone: choose one.');
      if (params.factor !== undefined && params.undo !== undefined) out.set('undo', 'A factor and an undo factor: choose one.');
      break;
    }
    case 'stretch':
      if (params.ratio === undefined) out.set('ratio', 'Say how much: the new duration ÷ the old one.');
      break;
    case 'transpose':
      if (params.semitones === undefined && params.cents === undefined) out.set('semitones', 'Say how far: semitones, cents, or both.');
      break;
    case 'align':
      if (facts.channelCount < 2) out.set('', 'Aligning channels needs at least two channels.');
      break;
    case 'reverse': {
      const from = n('fromSeconds') ?? 0, to = n('toSeconds') ?? durationSeconds;
      if (from >= durationSeconds) out.set('fromSeconds', `The recording is only ${durationSeconds.toFixed(3)} s long.`);
      else if (to <= from) out.set('toSeconds', 'The end must come after the start.');
      const chans = params.channels;
      if (Array.isArray(chans) && chans.some((c) => (c as number) > facts.channelCount)) out.set('channels', `This recording has ${facts.channelCount} channel${facts.channelCount === 1 ? '' : 's'}.`);
      break;
    }
  }
  return out;
}
