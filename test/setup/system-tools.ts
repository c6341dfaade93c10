/**
 * Programs the tests need that npm cannot install (Debian packages): Chromium for the browser
 * tests, python3 for checks against Python's standard library, redis-server for the queue tests,
 * fluidsynth and the recorded sample sets for the real-material corpus. `npm test` must pass on a fresh machine by itself, so a missing program is
 * installed through apt when the tests run as root (as CI does); otherwise the run stops at once
 * with one line naming the package to install. A missing program never skips a test.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';

export interface SystemTool {
  /** What needs it, for the message ("the browser tests"). */
  readonly purpose: string;
  /** Debian packages that provide it. */
  readonly packages: readonly string[];
  /** Files that must exist once installed (the first one found is returned). */
  readonly files: readonly string[];
}

export const CHROMIUM: SystemTool = {
  purpose: 'the browser tests',
  packages: ['chromium'],
  files: ['/usr/lib/chromium/chromium', '/usr/bin/chromium'],
};

export const REDIS: SystemTool = {
  purpose: 'the job-queue tests',
  packages: ['redis-server'],
  files: ['/usr/bin/redis-server'],
};

export const PYTHON3: SystemTool = {
  purpose: 'the tests that compare with Python\'s standard library',
  packages: ['python3'],
  files: ['/usr/bin/python3'],
};

export const OPENSSL: SystemTool = {
  purpose: 'the job-queue TLS test',
  packages: ['openssl'],
  files: ['/usr/bin/openssl'],
};

/** The reference FLAC encoder/decoder (Xiph.Org libFLAC command-line tool, Debian package flac). */
export const FLAC_TOOL: SystemTool = {
  purpose: 'the FLAC reference checks',
  packages: ['flac'],
  files: ['/usr/bin/flac'],
};

const firstExisting = (files: readonly string[]) => files.find((f) => fs.existsSync(f));

const isRoot = () => typeof process.getuid === 'function' && process.getuid() === 0;

let aptUpdated = false;

/** Installs Debian packages through apt (root only). Throws one line when that is not possible. */
export function aptInstall(packages: readonly string[], purpose: string): void {
  const hint = `${purpose} need the Debian package${packages.length > 1 ? 's' : ''} ${packages.join(' ')}: run \`sudo apt-get install -y ${packages.join(' ')}\` and run the tests again`;
  if (!isRoot() || spawnSync('apt-get', ['--version'], { stdio: 'ignore' }).status !== 0) throw new Error(hint);
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  process.stderr.write(`installing ${packages.join(' ')} for ${purpose} (apt-get)…\n`);
  try {
    // Test files run in parallel: a second apt-get waits for the first one's lock instead of failing.
    const wait = ['-o', 'DPkg::Lock::Timeout=600'];
    if (!aptUpdated) {
      execFileSync('apt-get', [...wait, 'update', '-qq'], { stdio: ['ignore', 'ignore', 'inherit'], env });
      aptUpdated = true;
    }
    execFileSync('apt-get', [...wait, 'install', '-y', '-qq', '--no-install-recommends', ...packages], { stdio: ['ignore', 'ignore', 'inherit'], env });
  } catch {
    throw new Error(`${hint} (apt-get failed)`);
  }
}

/** Path of the tool's first file, installing its packages first when none exists. */
export function ensureTool(tool: SystemTool): string {
  const found = firstExisting(tool.files);
  if (found) return found;
  aptInstall(tool.packages, tool.purpose);
  const after = firstExisting(tool.files);
  if (!after) throw new Error(`${tool.purpose}: installed ${tool.packages.join(' ')} but found none of ${tool.files.join(', ')}`);
  return after;
}

/** A program on PATH (for tools without a fixed install path). */
export function onPath(command: string): string | undefined {
  for (const dir of (process.env.PATH ?? '').split(path.delimiter)) {
    const p = path.join(dir, command);
    if (dir && fs.existsSync(p)) return p;
  }
  return undefined;
}
