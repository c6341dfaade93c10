/**
 * The batch report as data, and its CSV form. The JSON report is this object as it is; the HTML
 * report (report-html.ts) and the CSV are renderings of it. Pure functions.
 */
import type { FileEntry } from './check-file.ts';
import { METRICS, type Thresholds } from './thresholds.ts';
import type { ManifestCheck } from './fixity.ts';

export interface CheckReport {
  tool: 'reelwright check';
  version: string;
  createdAt: string;
  /** The PATH arguments as given. */
  paths: string[];
  thresholds: Thresholds;
  summary: { files: number; pass: number; warn: number; fail: number; resumed: number; seconds: number };
  /** With --manifest: what the checksum manifest says (missing, changed and extra files). */
  manifest?: ManifestCheck;
  /** A batch checked on the job queue (`check --queue`): its name. */
  batch?: string;
  files: FileEntry[];
}

const obj = (v: unknown): Record<string, unknown> | undefined =>
  v !== null && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : undefined;
const num = (v: unknown): number | undefined => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);

/** A column of the CSV (and of the HTML numbers table): header and how to read it from an entry. */
export interface Column {
  header: string;
  get(e: FileEntry): string | number | boolean | undefined;
}

const micro = (v: number | undefined) => (v === undefined ? undefined : v * 1e6);
const round = (v: number | undefined, digits: number) => (v === undefined ? undefined : Math.round(v * 10 ** digits) / 10 ** digits);

export const COLUMNS: Column[] = [
  { header: 'path', get: (e) => e.file.path },
  { header: 'status', get: (e) => e.status },
  { header: 'reasons', get: (e) => e.reasons?.join('; ') },
  { header: 'error', get: (e) => e.error },
  { header: 'format', get: (e) => e.file.format },
  { header: 'sampleRateHz', get: (e) => e.file.sampleRateHz },
  { header: 'channels', get: (e) => e.file.channels },
  { header: 'bitsPerSample', get: (e) => e.file.bitsPerSample },
  { header: 'sampleFormat', get: (e) => e.file.sampleFormat },
  { header: 'durationSeconds', get: (e) => round(e.file.durationSeconds, 3) },
  { header: 'audioMd5', get: (e) => e.file.audioMd5 },
  { header: 'sha256', get: (e) => e.file.sha256 },
  { header: 'manifest', get: (e) => (typeof e.manifest === 'string' ? e.manifest : undefined) },
  { header: 'nonFiniteSamples', get: (e) => (e.error === undefined ? num(e.nonFiniteSamples) ?? 0 : undefined) },
  { header: 'loudnessLufs', get: (e) => round(num(obj(e.levels)?.loudnessLufs), 2) },
  { header: 'truePeakDbtp', get: (e) => round(num(obj(e.levels)?.truePeakDbtp), 2) },
  { header: 'loudnessRangeLu', get: (e) => round(num(obj(e.levels)?.loudnessRangeLu), 1) },
  { header: 'clippedRuns', get: (e) => METRICS['levels.clippedRuns']!.get(e) },
  { header: 'dcOffsetPercent', get: (e) => round(METRICS['levels.dcOffsetPercent']!.get(e), 3) },
  { header: 'dropouts', get: (e) => METRICS['levels.dropouts']!.get(e) },
  { header: 'headSilenceSeconds', get: (e) => METRICS['levels.headSilenceSeconds']!.get(e) },
  { header: 'tailSilenceSeconds', get: (e) => METRICS['levels.tailSilenceSeconds']!.get(e) },
  { header: 'bandwidthHz', get: (e) => METRICS['levels.bandwidthHz']!.get(e) },
  { header: 'speedFactor', get: (e) => round(num(obj(e.speed)?.factor), 6) },
  { header: 'speedCents', get: (e) => round(num(obj(e.speed)?.cents), 2) },
  { header: 'speedMethod', get: (e) => obj(e.speed)?.method as string | undefined },
  { header: 'echoPresent', get: (e) => obj(e.echo)?.present as boolean | undefined },
  { header: 'echoDelaySeconds', get: (e) => (obj(e.echo)?.present === true ? round(num(obj(e.echo)?.delaySeconds), 6) : undefined) },
  { header: 'echoGain', get: (e) => (obj(e.echo)?.present === true ? round(num(obj(e.echo)?.gain), 4) : undefined) },
  { header: 'printThroughPresent', get: (e) => obj(e.printThrough)?.present as boolean | undefined },
  { header: 'printThroughDelaySeconds', get: (e) => (obj(e.printThrough)?.present === true ? round(num(obj(e.printThrough)?.delaySeconds), 4) : undefined) },
  { header: 'printThroughLevelDb', get: (e) => (obj(e.printThrough)?.present === true ? round(num(obj(e.printThrough)?.levelDb), 1) : undefined) },
  { header: 'flutterToneHz', get: (e) => num(obj(e.flutter)?.toneHz) },
  { header: 'flutterWeightedPeakPercent', get: (e) => round(num(obj(e.flutter)?.weightedPeakPercent), 4) },
  { header: 'flutterUnweightedPeakPercent', get: (e) => round(num(obj(e.flutter)?.unweightedPeakPercent), 4) },
  { header: 'flutterWeightedRmsPercent', get: (e) => round(num(obj(e.flutter)?.weightedRmsPercent), 4) },
  { header: 'flutterDriftPercent', get: (e) => round(num(obj(e.flutter)?.driftPercent), 4) },
  { header: 'flutterDominantRateHz', get: (e) => round(num(obj(e.flutter)?.dominantRateHz), 3) },
  { header: 'azimuthDelayMicroseconds', get: (e) => round(micro(num(obj(e.azimuth)?.delaySeconds)), 2) },
  { header: 'azimuthCoherence', get: (e) => round(num(obj(e.azimuth)?.coherence), 3) },
  { header: 'azimuthMonoNullHz', get: (e) => round(num(obj(e.azimuth)?.monoNullHz), 0) },
  { header: 'reversedChannels', get: (e) => METRICS['reversed.channels']!.get(e) },
  { header: 'analysisSeconds', get: (e) => round(e.seconds, 2) },
];

/** RFC 4180 field: quoted when it holds a comma, quote or line break. */
function csvField(v: string | number | boolean | undefined): string {
  if (v === undefined || (typeof v === 'number' && !Number.isFinite(v))) return '';
  const s = String(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export function reportCsv(report: CheckReport): string {
  const rows = [COLUMNS.map((c) => c.header).join(',')];
  for (const e of report.files) rows.push(COLUMNS.map((c) => csvField(c.get(e))).join(','));
  return rows.join('\r\n') + '\r\n';
}
