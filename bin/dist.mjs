#!/usr/bin/env node
// `npm run dist [-- electron-builder options]`: desktop installers. Builds the editor page and the
// Electron shell, stages exactly what the app runs into build/app/ (the bundled main process and
// preload, the built page, the demo recording, a package.json without dependencies), then runs
// electron-builder with electron-builder.yml. Options after `--` go to electron-builder
// (`--dir` for an unpacked app only, `--linux`, `--win`, `--mac`, `-c.electronDist=DIR`).
// electron-builder downloads the Electron runtime for each target: this needs internet access.
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { buildPage, buildShell, root } from './build-editor.mjs';

export const defaultStageDir = path.join(root, 'build/app');

/** What goes into the app besides the builds, relative to the project and to the staged app alike. */
const COPIED = ['main/electron/main.cjs', 'assets/demo/thornbury-reel7.wav'];

/** Builds and stages the app into `stageDir`; returns it. */
export async function stageApp(stageDir = defaultStageDir) {
  fs.rmSync(stageDir, { recursive: true, force: true });
  await buildPage(path.join(stageDir, 'renderer/dist'));
  await buildShell(path.join(stageDir, 'main/electron/build'));
  for (const rel of COPIED) {
    const from = path.join(root, rel);
    if (!fs.existsSync(from)) throw new Error(`${rel} is missing (run \`npm run demo\` for the demo recording)`);
    fs.cpSync(from, path.join(stageDir, rel), { recursive: true, filter: (f) => !f.endsWith('.map') });
  }
  const pkg = JSON.parse(fs.readFileSync(path.join(root, 'package.json'), 'utf8'));
  const app = {
    name: pkg.name,
    productName: 'Reelwright',
    version: pkg.version,
    description: pkg.description,
    license: pkg.license,
    author: { name: 'Reelwright developers', email: 'reelwright@example.org' },
    main: 'main/electron/main.cjs',
  };
  fs.writeFileSync(path.join(stageDir, 'package.json'), JSON.stringify(app, null, 2) + '\n');
  return stageDir;
}

if (process.argv[1] && path.resolve(process.argv[1]) === path.join(root, 'bin/dist.mjs')) {
  // `--stage=DIR` stages somewhere else than build/app (the packaging test uses a temp folder).
  const args = process.argv.slice(2);
  const stageArg = args.find((a) => a.startsWith('--stage='));
  const stage = stageArg ? path.resolve(stageArg.slice('--stage='.length)) : defaultStageDir;
  await stageApp(stage);
  const cli = path.join(root, 'node_modules/electron-builder/cli.js');
  const builderArgs = ['--projectDir', root, '--config', path.join(root, 'electron-builder.yml'), `-c.directories.app=${stage}`, ...args.filter((a) => a !== stageArg)];
  const r = spawnSync(process.execPath, [cli, ...builderArgs], { stdio: 'inherit', cwd: root });
  process.exitCode = r.status ?? 1;
}
