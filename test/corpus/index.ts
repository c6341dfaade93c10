/**
 * The real-material corpus: clean clips rendered from recorded samples that Debian's archive
 * carries (Fluid R3 GM and TimGM6mb soundfonts through fluidsynth, Hydrogen drum kits, Festival
 * diphone voices, Asterisk prompts) and impaired copies with known faults applied exactly by
 * numpy/scipy. `build_corpus.py` makes it (see its header); this module finds, builds and reads it.
 *
 *   const corpus = await loadCorpus({ fast: true });   // the quick slice npm test uses
 *   for (const clip of corpus.clips) … clip.file, clip.truth …
 *
 * The cache lives in `.cache/corpus` (full) or `.cache/corpus-fast` (the quick slice) at the
 * repository root, or under `REELWRIGHT_CORPUS` when set. Builds are incremental.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { aptInstall } from '../setup/system-tools.ts';

export type ClipKind = 'music' | 'voice' | 'drums' | 'effect';

/** What an impaired clip carries (clean clips: speed factor 1 and nothing else). */
export interface ClipTruth {
  /** Played speed ÷ recorded speed (the mean when a speed curve was applied). */
  speedFactor: number;
  hum: { mainsHz: number; levelDbfs: number } | null;
  tone: { toneHz: number; seconds: number; levelDbfs: number } | null;
  /** Speed curve applied, in output time. */
  speedCurve: { timesSeconds: number[]; factors: number[] } | null;
  flutter: { depthPercent: number; rateHz: number } | null;
  /** y = x + g·x(t − τ). */
  reflection: { delaySeconds: number; gain: number } | null;
  /** A faint low-passed copy; negative delay = before (pre-echo). levelDb re the programme. */
  printThrough: { delaySeconds: number; levelDb: number } | null;
  /** 0-based channel indices played backwards. */
  reversedChannels: number[];
  /** Positive when channel 2 lags channel 1. */
  interChannelDelaySeconds: number | null;
  /** depthDb null: exact digital zeros. */
  dropouts: { startSeconds: number; durationSeconds: number; depthDb: number | null }[];
  clipped: boolean;
  /** Low-pass cut-off applied. */
  bandwidthHz: number | null;
}

export interface ImpairmentStep {
  readonly type: string;
  readonly [k: string]: unknown;
}

export interface CorpusClip {
  id: string;
  set: 'clean' | 'impaired';
  /** 'holdout' clips come from sources the estimators were not tuned on. */
  split: 'dev' | 'holdout';
  kind: ClipKind;
  /** Absolute path of the WAV file. */
  file: string;
  sampleRateHz: number;
  channels: number;
  frames: number;
  durationSeconds: number;
  description: string;
  sourceDescription?: string;
  /** For impaired clips: the clean clip it was made from. */
  cleanId?: string;
  /** Impairments as applied (realised values, e.g. the exact rational speed factor). */
  steps: ImpairmentStep[];
  truth: ClipTruth;
  tags: string[];
  /** Part of the quick slice. */
  fast: boolean;
  /**
   * Absolute path of the same clip with the faults in `referenceWithout` left out: what a
   * correction of those faults should give back (e.g. the clip before its reflection was added).
   */
  referenceFile?: string;
  referenceWithout?: string[];
}

export interface Corpus {
  dir: string;
  fast: boolean;
  /** Debian package and Python library versions the corpus was built with. */
  packages: Record<string, string | null>;
  clips: CorpusClip[];
  byId(id: string): CorpusClip | undefined;
}

const ROOT = path.resolve(import.meta.dirname, '../..');
const SCRIPT = path.join(ROOT, 'test/corpus/build_corpus.py');

/** Files the build reads, the Debian package that provides each, and whether the quick slice needs it. */
const NEEDS: readonly (readonly [string, string, boolean])[] = [
  ['/usr/bin/fluidsynth', 'fluidsynth', true],
  ['/usr/share/sounds/sf2/FluidR3_GM.sf2', 'fluid-soundfont-gm', true],
  ['/usr/share/sounds/sf2/TimGM6mb.sf2', 'timgm6mb-soundfont', false],
  ['/usr/share/hydrogen/data/drumkits/ColomboAcousticDrumkit', 'hydrogen-drumkits', true],
  ['/usr/bin/flac', 'flac', true],
  ['/usr/bin/text2wave', 'festival', true],
  ['/usr/share/festival/voices/english/kal_diphone', 'festvox-kallpc16k', true],
  ['/usr/share/festival/voices/english/ked_diphone', 'festvox-kdlpc16k', false],
  ['/usr/share/asterisk/sounds/en_US_f_Allison', 'asterisk-core-sounds-en-wav', false],
];

export function corpusDir(fast: boolean): string {
  const base = process.env.REELWRIGHT_CORPUS ?? path.join(ROOT, '.cache');
  return path.join(base, fast ? 'corpus-fast' : 'corpus');
}

/** Installs the Debian packages the corpus is rendered from (root), or throws one line. */
export function ensureCorpusPrograms(fast = false): void {
  const missing = [...new Set(NEEDS.filter(([f, , quick]) => (quick || !fast) && !fs.existsSync(f)).map(([, p]) => p))];
  if (missing.length) aptInstall(missing, 'the real-material corpus');
  if (spawnSync('python3', ['-c', 'import numpy, scipy'], { stdio: 'ignore' }).status !== 0) {
    throw new Error('the real-material corpus needs python3 with numpy and scipy (Debian: apt-get install -y python3-numpy python3-scipy)');
  }
}

function recipeHash(fast: boolean): string {
  return execFileSync('python3', [SCRIPT, '--out', '/nonexistent', '--hash', ...(fast ? ['--fast'] : [])], { encoding: 'utf8' }).trim();
}

/** Builds the corpus when it is missing or its recipes changed, then reads its manifest. */
export async function loadCorpus(options: { fast?: boolean; quiet?: boolean; jobs?: number } = {}): Promise<Corpus> {
  const fast = options.fast ?? false;
  const dir = corpusDir(fast);
  const manifestPath = path.join(dir, 'manifest.json');
  const read = () => JSON.parse(fs.readFileSync(manifestPath, 'utf8')) as { recipeHash: string; packages: Corpus['packages']; clips: CorpusClip[] };
  let manifest = fs.existsSync(manifestPath) ? read() : undefined;
  if (!manifest || manifest.recipeHash !== recipeHash(fast)) {
    ensureCorpusPrograms(fast);
    fs.mkdirSync(dir, { recursive: true });
    execFileSync('python3', [SCRIPT, '--out', dir, ...(fast ? ['--fast'] : []), '--jobs', String(options.jobs ?? 2)], {
      stdio: ['ignore', options.quiet ? 'ignore' : 'inherit', 'inherit'],
    });
    manifest = read();
  }
  const clips = manifest.clips.map((c) => ({
    ...c,
    file: path.join(dir, c.file),
    ...(c.referenceFile ? { referenceFile: path.join(dir, c.referenceFile) } : {}),
  }));
  const index = new Map(clips.map((c) => [c.id, c]));
  return { dir, fast, packages: manifest.packages, clips, byId: (id) => index.get(id) };
}
