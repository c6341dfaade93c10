/**
 * The work on one file of a batch check: open it, checksum the audio (fixity), run every analysis
 * that applies (dsp/ops/diagnose.ts) and return one plain, cloneable entry. Runs inside a check
 * process (worker.ts) or in-process. Failures to open or read become an entry with `error`, never
 * an exception, so a batch goes on past a bad file.
 */
import { diagnose } from '../../dsp/ops/diagnose.ts';
import type { Finding, ParamValues } from '../../dsp/ops/types.ts';
import { CancelledError, InputError } from '../../dsp/errors.ts';
import type { FileInfo, OpenedAudio } from '../io/types.ts';
import { fileSha256 } from './fixity.ts';

export interface CheckJob {
  path: string;
  /** Parameters per analysis verb (e.g. { flutter: { toneHz: 3000 } }). */
  params: Record<string, ParamValues>;
  /** Checksum from an earlier report: when the audio still has it, the analyses are skipped. */
  previousMd5?: string;
}

/** The entry's `file`: the contract's file object plus the SHA-256 of the file's bytes (fixity). */
export type EntryFile = Partial<FileInfo> & { path: string; sha256?: string };

/** One file's row in the report. Analysis sections sit beside `file` under their contract keys. */
export interface FileEntry {
  file: EntryFile;
  findings: Finding[];
  notes: { op: string; reason: string }[];
  /** Why the file could not be checked (unreadable, truncated…). */
  error?: string;
  /** Wall time spent on this file, seconds. */
  seconds: number;
  /** Filled in by the coordinator from the thresholds. */
  status?: 'pass' | 'warn' | 'fail';
  reasons?: string[];
  /** True when taken over from an earlier report (same checksum). */
  resumed?: boolean;
  [section: string]: unknown;
}

export type JobResult = { kind: 'entry'; entry: FileEntry } | { kind: 'unchanged'; file: FileInfo & { sha256?: string } };

export type Opener = (path: string) => Promise<OpenedAudio>;

const MD5_SHARE = 0.1;

export async function checkFile(job: CheckJob, open: Opener, onProgress: (fraction: number) => void, signal?: { aborted: boolean }): Promise<JobResult> {
  const t0 = Date.now();
  const seconds = () => (Date.now() - t0) / 1000;
  // The whole file's SHA-256 (fixity manifests), also for files that cannot be read as audio.
  let sha256: string | undefined;
  try {
    sha256 = fileSha256(job.path, (f) => onProgress(0.5 * MD5_SHARE * f));
  } catch {
    /* unopenable: the opener below says why */
  }
  const withSha = <T extends object>(o: T) => (sha256 === undefined ? o : { ...o, sha256 });
  let file: OpenedAudio;
  try {
    file = await open(job.path);
  } catch (e) {
    return { kind: 'entry', entry: { file: withSha({ path: job.path }), findings: [], notes: [], error: reason(e), seconds: seconds() } };
  }
  let info: FileInfo & { sha256?: string } = { ...file.info };
  try {
    info.audioMd5 = await file.audioMd5((f) => onProgress(0.5 * MD5_SHARE * (1 + f)));
    info = withSha(info);
    if (job.previousMd5 !== undefined && job.previousMd5 === info.audioMd5) return { kind: 'unchanged', file: info };
    const warnings: string[] = [];
    const result = await diagnose(
      file,
      { progress: (f) => onProgress(MD5_SHARE + (1 - MD5_SHARE) * f), warn: (m) => warnings.push(m), signal },
      { params: job.params },
    );
    info = withSha({ ...info, ...file.info, audioMd5: info.audioMd5 });
    // Float files may hold NaN/Inf samples; the reader counts them (they are read as 0).
    const nonFinite = file.nonFiniteSamples ?? 0;
    return {
      kind: 'entry',
      entry: {
        file: info,
        ...(nonFinite > 0 ? { nonFiniteSamples: nonFinite } : {}),
        ...result.sections,
        findings: result.findings,
        notes: [...result.notes, ...warnings.map((w) => ({ op: w.split(':')[0] ?? '', reason: w }))],
        seconds: seconds(),
      },
    };
  } catch (e) {
    if (e instanceof CancelledError) throw e;
    return { kind: 'entry', entry: { file: withSha(info), findings: [], notes: [], error: reason(e), seconds: seconds() } };
  } finally {
    await file.close().catch(() => {});
  }
}

/** One line saying what went wrong with a file. */
export function reason(e: unknown): string {
  if (e instanceof InputError) return e.message + (e.byteOffset !== undefined ? ` (at byte ${e.byteOffset})` : '');
  if (e instanceof Error) return e.name === 'Error' ? e.message : `${e.name}: ${e.message}`;
  return String(e);
}
