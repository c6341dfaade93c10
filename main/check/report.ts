/**
 * The batch report as data, and its CSV form (columns from the operation registry). The JSON report is this object as it is; the HTML
 * report (report-html.ts) and the CSV are renderings of it. Pure functions.
 */
import type { FileEntry } from './check-file.ts';
import type { Thresholds } from './thresholds.ts';
import { BugError } from '../../dsp/errors.ts';
import { analyses, onRegistryChange } from '../../dsp/ops/registry.ts';
import { numberOf, roundTo } from '../../dsp/ops/sections.ts';
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

/** A column of the CSV (and of the HTML numbers table): header and how to read it from an entry. */
export interface Column {
  header: string;
  get(e: FileEntry): string | number | boolean | undefined;
}

/** The check's own columns of the file entry, before the analyses' columns. */
const HEAD: Column[] = [
  { header: 'path', get: (e) => e.file.path },
  { header: 'status', get: (e) => e.status },
  { header: 'reasons', get: (e) => e.reasons?.join('; ') },
  { header: 'error', get: (e) => e.error },
  { header: 'format', get: (e) => e.file.format },
  { header: 'sampleRateHz', get: (e) => e.file.sampleRateHz },
  { header: 'channels', get: (e) => e.file.channels },
  { header: 'bitsPerSample', get: (e) => e.file.bitsPerSample },
  { header: 'sampleFormat', get: (e) => e.file.sampleFormat },
  { header: 'durationSeconds', get: (e) => roundTo(e.file.durationSeconds, 3) },
  { header: 'audioMd5', get: (e) => e.file.audioMd5 },
  { header: 'sha256', get: (e) => e.file.sha256 },
  { header: 'manifest', get: (e) => (typeof e.manifest === 'string' ? e.manifest : undefined) },
  { header: 'nonFiniteSamples', get: (e) => (e.error === undefined ? numberOf(e.nonFiniteSamples) ?? 0 : undefined) },
];
/** … and after them. */
const TAIL: Column[] = [{ header: 'analysisSeconds', get: (e) => roundTo(e.seconds, 2) }];

/** Every column: the check's own, each analysis's `columns` in registry order, the time taken. */
export function reportColumns(): Column[] {
  const all: Column[] = [...HEAD, ...analyses().flatMap((op) => op.columns ?? []), ...TAIL];
  const seen = new Set<string>();
  for (const c of all) {
    if (seen.has(c.header)) throw new BugError(`report column "${c.header}" is defined twice`);
    seen.add(c.header);
  }
  return all;
}

/** The columns (kept up to date with the registry). */
export const COLUMNS: Column[] = [];
const refreshColumns = () => void COLUMNS.splice(0, COLUMNS.length, ...reportColumns());
refreshColumns();
onRegistryChange(refreshColumns);

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
