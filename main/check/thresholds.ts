/**
 * Pass/warn/fail rules of `reelwright check`: named metrics pulled from a file's analysis sections,
 * compared with thresholds from a small JSON file (defaults: default-thresholds.json, documented
 * there rule by rule). Pure: no file system here.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { ParameterError } from '../../dsp/errors.ts';

export type Status = 'pass' | 'warn' | 'fail';

export interface Rule {
  warnAt?: number;
  failAt?: number;
  warnBelow?: number;
  failBelow?: number;
}
export type Thresholds = Record<string, Rule>;

export interface Judgement {
  status: Status;
  /** One plain sentence per crossed threshold, worst first. */
  reasons: string[];
}

/** What a metric is called in reasons, and its unit. */
interface Metric {
  label: string;
  unit: string;
  digits: number;
  /** A yes/no metric (1 or 0): a crossed rule's reason is the label alone. */
  flag?: boolean;
  /** The value, or undefined when the analysis did not run / does not apply. */
  get(s: Sections): number | undefined;
}

/** The analysis sections of one file, keyed as in the JSON contract (levels, speed, echo…). */
export type Sections = Record<string, unknown> & { error?: string };

const obj = (v: unknown): Record<string, unknown> | undefined =>
  v !== null && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : undefined;
const numOf = (v: unknown): number | undefined => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);
const arr = (v: unknown): unknown[] | undefined => (Array.isArray(v) ? v : undefined);

export const METRICS: Record<string, Metric> = {
  'file.unreadable': { label: 'unreadable file', unit: '', digits: 0, get: (s) => (s.error !== undefined ? 1 : 0) },
  'file.nonFiniteSamples': { label: 'NaN or infinite samples', unit: '', digits: 0, get: (s) => (s.error !== undefined ? undefined : numOf(s.nonFiniteSamples) ?? 0) },
  'fixity.manifestChanged': {
    label: 'SHA-256 differs from the manifest', unit: '', digits: 0, flag: true,
    get: (s) => (s.manifest === undefined ? undefined : s.manifest === 'changed' ? 1 : 0),
  },
  'fixity.notInManifest': {
    label: 'not listed in the manifest', unit: '', digits: 0, flag: true,
    get: (s) => (s.manifest === undefined ? undefined : s.manifest === 'unlisted' ? 1 : 0),
  },
  'file.sampleRateHz': { label: 'sample rate', unit: 'Hz', digits: 0, get: (s) => numOf(obj(s.file)?.sampleRateHz) },
  'file.bitsPerSample': { label: 'word length', unit: 'bits', digits: 0, get: (s) => numOf(obj(s.file)?.bitsPerSample) },
  'levels.clippedRuns': {
    label: 'clipped runs', unit: '', digits: 0,
    get: (s) => {
      const ch = arr(obj(s.levels)?.channels);
      return ch ? ch.reduce<number>((a, c) => a + (numOf(obj(c)?.clippedRunCount) ?? 0), 0) : undefined;
    },
  },
  'levels.truePeakDbtp': { label: 'true peak', unit: 'dBTP', digits: 1, get: (s) => numOf(obj(s.levels)?.truePeakDbtp) },
  'levels.loudnessLufs': { label: 'loudness', unit: 'LUFS', digits: 1, get: (s) => numOf(obj(s.levels)?.loudnessLufs) },
  'levels.silentChannels': {
    label: 'silent channels', unit: '', digits: 0,
    get: (s) => {
      const ch = arr(obj(s.levels)?.channels);
      // A null/−∞ peak (digital silence) counts as silent.
      return ch ? ch.filter((c) => !((numOf(obj(c)?.peakDbfs) ?? -Infinity) > -60)).length : undefined;
    },
  },
  'levels.dcOffsetPercent': {
    label: 'DC offset', unit: '%', digits: 2,
    get: (s) => {
      const ch = arr(obj(s.levels)?.channels);
      return ch ? Math.max(0, ...ch.map((c) => Math.abs(numOf(obj(c)?.dcOffset) ?? 0) * 100)) : undefined;
    },
  },
  'levels.dropouts': { label: 'dropouts', unit: '', digits: 0, get: (s) => arr(obj(s.levels)?.dropouts)?.length },
  'levels.headSilenceSeconds': { label: 'silence at the head', unit: 's', digits: 1, get: (s) => silence(s, 'headSeconds') },
  'levels.tailSilenceSeconds': { label: 'silence at the tail', unit: 's', digits: 1, get: (s) => silence(s, 'tailSeconds') },
  'levels.bandwidthHz': {
    // The levels analysis's figure (its rule finds band edges and reads full-band pink-ish
    // programme as full band), else the spectrum analysis's.
    label: 'effective bandwidth', unit: 'Hz', digits: 0,
    get: (s) => (obj(obj(s.levels)?.silence)?.allSilent === true ? undefined : numOf(obj(s.levels)?.bandwidthHz) ?? numOf(obj(s.spectrum)?.bandwidthHz)),
  },
  'flutter.weightedPeakPercent': { label: 'wow and flutter (weighted)', unit: '%', digits: 3, get: (s) => numOf(obj(s.flutter)?.weightedPeakPercent) },
  'flutter.driftPercent': { label: 'speed drift', unit: '%', digits: 2, get: (s) => numOf(obj(s.flutter)?.driftPercent) },
  'flutter.meanSpeedErrorPercent': {
    label: 'test tone off nominal', unit: '%', digits: 2,
    get: (s) => {
      const v = numOf(obj(s.flutter)?.meanSpeedErrorPercent);
      return v === undefined ? undefined : Math.abs(v);
    },
  },
  'azimuth.delayMicroseconds': {
    label: 'inter-channel delay', unit: 'µs', digits: 1,
    get: (s) => {
      const a = obj(s.azimuth);
      // Judged only where the delay is evidence of the head (the azimuth analysis's verdict):
      // stereo programme's own inter-channel timing is not a transfer fault.
      const d = numOf(a?.delaySeconds);
      return d === undefined || a?.verdict !== 'head' ? undefined : Math.abs(d) * 1e6;
    },
  },
  'speed.absCents': {
    label: 'speed error', unit: 'cents', digits: 1,
    get: (s) => {
      const sp = obj(s.speed);
      const cents = numOf(sp?.cents), conf = numOf(sp?.confidence);
      return cents === undefined || (conf !== undefined && conf < 0.5) ? undefined : Math.abs(cents);
    },
  },
  'echo.gainDb': {
    label: 'echo level', unit: 'dB', digits: 1,
    get: (s) => {
      const e = obj(s.echo);
      const g = numOf(e?.gain);
      return e?.present === true && g !== undefined && g !== 0 ? 20 * Math.log10(Math.abs(g)) : undefined;
    },
  },
  'printThrough.levelDb': {
    label: 'print-through level', unit: 'dB', digits: 1,
    get: (s) => {
      const p = obj(s.printThrough);
      return p?.present === true ? numOf(p.levelDb) : undefined;
    },
  },
  'reversed.channels': {
    label: 'reversed channels', unit: '', digits: 0,
    get: (s) => arr(obj(s.reversed)?.channels)?.filter((c) => obj(c)?.likely === true).length,
  },
};

function silence(s: Sections, key: 'headSeconds' | 'tailSeconds'): number | undefined {
  const si = obj(obj(s.levels)?.silence);
  if (!si || si.allSilent === true) return undefined;
  return numOf(si[key]);
}

const DEFAULTS_URL = new URL('./default-thresholds.json', import.meta.url);

/** The documented defaults (default-thresholds.json), without its comments. */
export function defaultThresholds(): Thresholds {
  return cleanRules(JSON.parse(readFileSync(fileURLToPath(DEFAULTS_URL), 'utf8')) as Record<string, unknown>, 'default-thresholds.json');
}

/** Defaults overlaid with a user's rules (`null` switches a rule off). Throws ParameterError on unknown metrics or bad values. */
export function mergeThresholds(base: Thresholds, user: Record<string, unknown>, where: string): Thresholds {
  const out: Thresholds = { ...base };
  for (const [k, v] of Object.entries(user)) {
    if (k.startsWith('$')) continue;
    if (v === null) {
      if (!(k in METRICS)) throw new ParameterError(`${where}: unknown metric "${k}" (known: ${Object.keys(METRICS).join(', ')})`);
      delete out[k];
      continue;
    }
    Object.assign(out, cleanRules({ [k]: v }, where));
  }
  return out;
}

function cleanRules(raw: Record<string, unknown>, where: string): Thresholds {
  const out: Thresholds = {};
  for (const [k, v] of Object.entries(raw)) {
    if (k.startsWith('$')) continue;
    if (!(k in METRICS)) throw new ParameterError(`${where}: unknown metric "${k}" (known: ${Object.keys(METRICS).join(', ')})`);
    const r = obj(v);
    if (!r) throw new ParameterError(`${where}: "${k}" must be an object like {"warnAt": 1, "failAt": 5}`);
    const rule: Rule = {};
    for (const [f, x] of Object.entries(r)) {
      if (f.startsWith('$')) continue;
      if (!['warnAt', 'failAt', 'warnBelow', 'failBelow'].includes(f)) {
        throw new ParameterError(`${where}: "${k}.${f}": expected warnAt, failAt, warnBelow or failBelow`);
      }
      if (typeof x !== 'number' || !Number.isFinite(x)) throw new ParameterError(`${where}: "${k}.${f}" must be a number`);
      rule[f as keyof Rule] = x;
    }
    out[k] = rule;
  }
  return out;
}

const fmt = (v: number, digits: number) => (digits === 0 ? String(Math.round(v)) : v.toFixed(digits));

/** Judges one file: the worst status over all rules whose metric is present, with a reason for each crossing. */
export function judge(sections: Sections, thresholds: Thresholds): Judgement {
  const fails: string[] = [], warns: string[] = [];
  if (sections.error !== undefined && thresholds['file.unreadable']) {
    const r = thresholds['file.unreadable']!;
    const msg = `unreadable: ${sections.error}`;
    if (r.failAt !== undefined && 1 >= r.failAt) fails.push(msg);
    else if (r.warnAt !== undefined && 1 >= r.warnAt) warns.push(msg);
  }
  for (const [id, rule] of Object.entries(thresholds)) {
    if (id === 'file.unreadable') continue;
    const m = METRICS[id];
    const v = m?.get(sections);
    if (!m || v === undefined) continue;
    const u = m.unit ? ` ${m.unit}` : '';
    const say = (op: string, limit: number) => (m.flag ? m.label : `${m.label} ${fmt(v, m.digits)}${u} ${op} ${fmt(limit, m.digits)}${u}`);
    if (rule.failAt !== undefined && v >= rule.failAt) fails.push(say('≥', rule.failAt));
    else if (rule.failBelow !== undefined && v < rule.failBelow) fails.push(say('<', rule.failBelow));
    else if (rule.warnAt !== undefined && v >= rule.warnAt) warns.push(say('≥', rule.warnAt));
    else if (rule.warnBelow !== undefined && v < rule.warnBelow) warns.push(say('<', rule.warnBelow));
  }
  const status: Status = fails.length ? 'fail' : warns.length ? 'warn' : 'pass';
  return { status, reasons: [...fails.map((r) => `fail: ${r}`), ...warns.map((r) => `warn: ${r}`)] };
}
