/**
 * Fixity for `reelwright check`: the SHA-256 of every file, and checksum manifests in the line
 * format shared by BagIt payload manifests and `sha256sum` (`CHECKSUM  PATH`, one file a line,
 * paths relative to the manifest's folder with `/` between folders).
 *
 * Source: RFC 8493 (The BagIt File Packaging Format, v1.0) §2.1.3 — "checksum filepath", one or
 * more spaces between, filepath relative to the base directory, and only LF, CR and % in a
 * filepath percent-encoded (%0A, %0D, %25). A leading `*` before the path (sha256sum's binary
 * mark) is accepted on reading.
 */
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { ParameterError } from '../../dsp/errors.ts';
import { walkFiles } from './walk.ts';

const READ_BYTES = 4 << 20;

/** SHA-256 (hex) of a whole file's bytes, read in 4 MiB pieces. */
export function fileSha256(filePath: string, onProgress?: (fraction: number) => void): string {
  const fd = fs.openSync(filePath, 'r');
  try {
    const size = fs.fstatSync(fd).size;
    const hash = createHash('sha256');
    const buf = Buffer.allocUnsafe(READ_BYTES);
    let at = 0;
    for (;;) {
      const n = fs.readSync(fd, buf, 0, READ_BYTES, at);
      if (n === 0) break;
      hash.update(buf.subarray(0, n));
      at += n;
      if (size > 0) onProgress?.(Math.min(1, at / size));
    }
    return hash.digest('hex');
  } finally {
    fs.closeSync(fd);
  }
}

export interface ManifestLine {
  sha256: string;
  /** As written in the manifest (decoded): relative to the manifest's folder, `/` separated. */
  relPath: string;
}

const LINE = /^([0-9A-Fa-f]+)[ \t]+\*?(.+)$/;

/** Reads a manifest's text. Throws ParameterError naming the line for anything it cannot read. */
export function parseManifest(text: string, where: string): ManifestLine[] {
  const out: ManifestLine[] = [];
  const seen = new Set<string>();
  const lines = text.split(/\r?\n/);
  lines.forEach((raw, i) => {
    if (raw.trim() === '') return;
    const m = LINE.exec(raw);
    if (!m) throw new ParameterError(`${where}: line ${i + 1}: expected "CHECKSUM  PATH"`);
    const hex = m[1]!;
    if (hex.length !== 64) throw new ParameterError(`${where}: line ${i + 1}: a SHA-256 checksum has 64 hex digits, found ${hex.length}`);
    const rel = decodePath(m[2]!);
    if (path.posix.isAbsolute(rel) || rel.split('/').includes('..')) {
      throw new ParameterError(`${where}: line ${i + 1}: "${rel}" is not a path inside the manifest's folder`);
    }
    if (seen.has(rel)) throw new ParameterError(`${where}: line ${i + 1}: ${rel} is listed twice`);
    seen.add(rel);
    out.push({ sha256: hex.toLowerCase(), relPath: rel });
  });
  return out;
}

/** Manifest text for the given lines, sorted by path. */
export function formatManifest(lines: readonly ManifestLine[]): string {
  return [...lines]
    .sort((a, b) => (a.relPath < b.relPath ? -1 : a.relPath > b.relPath ? 1 : 0))
    .map((l) => `${l.sha256}  ${encodePath(l.relPath)}\n`)
    .join('');
}

// RFC 8493 §2.1.3: percent-encode only %, LF and CR.
function encodePath(p: string): string {
  return p.replace(/%/g, '%25').replace(/\n/g, '%0A').replace(/\r/g, '%0D');
}
function decodePath(p: string): string {
  return p.replace(/%(0A|0D|25)/gi, (_, c: string) => ({ '0A': '\n', '0D': '\r', '25': '%' })[c.toUpperCase()]!);
}

/** Only SHA-256 manifests are read and written; `manifest-md5.txt` and the like are refused by name. */
export function checkManifestName(file: string, flag: string): void {
  const m = /^(?:tag)?manifest-([a-z0-9]+)\.txt$/i.exec(path.basename(file));
  if (m && m[1]!.toLowerCase() !== 'sha256') {
    throw new ParameterError(`--${flag} ${file}: only SHA-256 manifests are supported (this name says ${m[1]})`);
  }
}

/** A file's path relative to the manifest's folder, `/` separated; undefined when it lies outside. */
export function manifestRelative(manifestFile: string, filePath: string): string | undefined {
  const rel = path.relative(path.dirname(path.resolve(manifestFile)), path.resolve(filePath));
  if (rel === '' || rel.startsWith('..' + path.sep) || rel === '..' || path.isAbsolute(rel)) return undefined;
  return rel.split(path.sep).join('/');
}

/**
 * Every regular file under the given paths (recursively; hidden files skipped, symlinked folders
 * followed once), for the "extra files" list and for writing a manifest. Explicitly named files
 * count as themselves.
 */
export function payloadFiles(paths: readonly string[], exclude: ReadonlySet<string>): string[] {
  return [...walkFiles(paths, { absolute: true })].filter((f) => !exclude.has(f)).sort();
}

/** The manifest part of a report (`manifest` beside `summary`). */
export interface ManifestCheck {
  /** The manifest file as named on the command line. */
  path: string;
  algorithm: 'sha256';
  /** Files listed in it. */
  listed: number;
  /** Listed files found with the listed checksum. */
  verified: number;
  /** Listed, but not found (paths as listed). */
  missing: string[];
  /** Found with another checksum. */
  changed: { path: string; expectedSha256: string; actualSha256: string }[];
  /** Found under the checked paths but not listed (paths relative to the manifest's folder). */
  extra: string[];
}

/** What one checked audio file's entry says about the manifest. */
export type ManifestStatus = 'match' | 'changed' | 'unlisted';

/**
 * Verifies a manifest against the checked audio files (whose SHA-256 the check already computed:
 * `sha256Of` gives it by absolute path) and every other file under the checked paths (hashed
 * here). Returns the report part and each audio file's status.
 */
export function verifyManifest(
  manifestFile: string,
  lines: readonly ManifestLine[],
  payload: readonly string[],
  sha256Of: (absPath: string) => string | undefined,
): { check: ManifestCheck; status: Map<string, ManifestStatus> } {
  const base = path.dirname(path.resolve(manifestFile));
  const listed = new Map(lines.map((l) => [path.resolve(base, ...l.relPath.split('/')), l] as const));
  const status = new Map<string, ManifestStatus>();
  const check: ManifestCheck = { path: manifestFile, algorithm: 'sha256', listed: lines.length, verified: 0, missing: [], changed: [], extra: [] };
  const actualOf = (abs: string): string | undefined => {
    const known = sha256Of(abs);
    if (known !== undefined) return known;
    try {
      return fs.statSync(abs).isFile() ? fileSha256(abs) : undefined;
    } catch {
      return undefined;
    }
  };
  for (const [abs, l] of listed) {
    const actual = actualOf(abs);
    if (actual === undefined) check.missing.push(l.relPath);
    else if (actual === l.sha256) {
      check.verified++;
      status.set(abs, 'match');
    } else {
      check.changed.push({ path: l.relPath, expectedSha256: l.sha256, actualSha256: actual });
      status.set(abs, 'changed');
    }
  }
  for (const f of payload) {
    if (listed.has(f)) continue;
    check.extra.push(manifestRelative(manifestFile, f) ?? f);
    status.set(f, 'unlisted');
  }
  check.missing.sort();
  check.extra.sort();
  check.changed.sort((a, b) => (a.path < b.path ? -1 : 1));
  return { check, status };
}
