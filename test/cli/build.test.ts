/**
 * The installed command line: bin/build-cli.mjs bundles main/cli/index.ts, everything it imports
 * and the check worker into JavaScript (what `npm install` leaves in build/cli), and that build
 * runs without the TypeScript loader and gives the same answers as the sources. Also: every
 * package the built command line imports at run time is a dependency, not a development one.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import { builtinModules } from 'node:module';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildCli, isFresh, type CliManifest } from '../../bin/build-cli.mjs';
import { demoPath, repoRoot, runCli } from '../helpers/cli.ts';

const out = path.join(repoRoot, 'build', `test-cli-${process.pid}`);
const pkg = JSON.parse(fs.readFileSync(path.join(repoRoot, 'package.json'), 'utf8')) as { dependencies: Record<string, string>; devDependencies: Record<string, string> };
let manifest: CliManifest;

/**
 * Runs the built command line in a plain Node process (no loader), through a file rather than
 * `node -e` (worker threads inherit -e and would run it again).
 */
function runBuilt(...argv: string[]) {
  return spawnSync(process.execPath, [path.join(out, 'run.mjs'), ...argv], { cwd: repoRoot, encoding: 'utf8', timeout: 120_000 });
}

beforeAll(async () => {
  manifest = await buildCli({ out, quiet: true });
  fs.writeFileSync(path.join(out, 'run.mjs'), `const { main } = await import(${JSON.stringify(pathToFileURL(path.join(out, 'index.mjs')).href)});\nprocess.exitCode = await main(process.argv.slice(2));\n`);
});
afterAll(() => fs.rmSync(out, { recursive: true, force: true }));

describe('built command line', () => {
  it('imports at run time only Node built-ins and packages listed as dependencies', () => {
    const packageOf = (spec: string) => (spec.startsWith('@') ? spec.split('/').slice(0, 2).join('/') : spec.split('/')[0]!);
    for (const ext of manifest.externals) {
      if (ext.startsWith('node:') || builtinModules.includes(ext)) continue;
      expect(Object.keys(pkg.dependencies), `${ext} is imported by the command line`).toContain(packageOf(ext));
    }
    for (const dev of ['tsx', 'fft.js', 'vitest', 'vite']) expect(Object.keys(pkg.dependencies)).not.toContain(dev);
    const js = fs.readdirSync(out).filter((f) => f.endsWith('.mjs')).map((f) => fs.readFileSync(path.join(out, f), 'utf8')).join('\n');
    expect(js).not.toMatch(/from\s*["']tsx|import\(["']tsx/);
  });

  it('dsp/ imports nothing outside dsp/ (so fft.js, the tests’ reference FFT, stays a development dependency)', () => {
    const bare: string[] = [];
    let seen = 0;
    const walk = (dir: string) => {
      for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
        const p = path.join(dir, e.name);
        if (e.isDirectory()) walk(p);
        else if (p.endsWith('.ts')) {
          for (const m of fs.readFileSync(p, 'utf8').matchAll(/^\s*(?:import|export)\b[^'"]*?from\s*['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]/gm)) {
            const spec = m[1] ?? m[2]!;
            seen++;
            if (!spec.startsWith('.')) bare.push(`${path.relative(repoRoot, p)}: ${spec}`);
            else expect(path.resolve(path.dirname(p), spec).startsWith(path.join(repoRoot, 'dsp') + path.sep), `${p} imports ${spec}`).toBe(true);
          }
        }
      }
    };
    walk(path.join(repoRoot, 'dsp'));
    expect(seen).toBeGreaterThan(100);
    expect(bare).toEqual([]);
  });

  it('bundles the check worker and lists every source it was built from', () => {
    expect(manifest.workers).toContain('worker-entry.mjs');
    expect(fs.existsSync(path.join(out, 'worker-entry.mjs'))).toBe(true);
    for (const src of ['main/cli/index.ts', 'dsp/ops/registry.ts', 'main/check/worker.ts', 'bin/build-cli.mjs']) expect(Object.keys(manifest.inputs)).toContain(src);
    expect(isFresh(manifest)).toBe(true);
    const touched = { ...manifest, inputs: { ...manifest.inputs, 'main/cli/index.ts': { ...manifest.inputs['main/cli/index.ts']!, size: 1 } } };
    expect(isFresh(touched)).toBe(false);
  });

  it('bin/reelwright.mjs rebuilds build/cli first when a source no longer matches the manifest', () => {
    const file = path.join(repoRoot, 'build/cli/manifest.json');
    spawnSync(process.execPath, [path.join(repoRoot, 'bin/reelwright.mjs'), '--version']); // make sure a build exists
    const m = JSON.parse(fs.readFileSync(file, 'utf8')) as CliManifest;
    const stale = { ...m, inputs: { ...m.inputs, 'main/cli/index.ts': { ...m.inputs['main/cli/index.ts']!, size: 1 } } };
    fs.writeFileSync(`${file}.${process.pid}.tmp`, JSON.stringify(stale));
    fs.renameSync(`${file}.${process.pid}.tmp`, file);
    const r = spawnSync(process.execPath, [path.join(repoRoot, 'bin/reelwright.mjs'), '--version'], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout.trim()).toBe('reelwright 0.1.0');
    const after = JSON.parse(fs.readFileSync(file, 'utf8')) as CliManifest;
    expect(after.inputs['main/cli/index.ts']!.size).toBe(fs.statSync(path.join(repoRoot, 'main/cli/index.ts')).size);
    expect(isFresh(after)).toBe(true);
  });

  it('gives the same answers as the sources: --version, info --json, an exit code 2', async () => {
    const v = runBuilt('--version');
    expect(v.status, v.stderr).toBe(0);
    expect(v.stdout.trim()).toBe('reelwright 0.1.0');
    const built = runBuilt('info', demoPath, '--json');
    expect(built.status, built.stderr).toBe(0);
    const src = await runCli('info', demoPath, '--json');
    expect(JSON.parse(built.stdout)).toEqual(JSON.parse(src.out));
    const bad = runBuilt('info', path.join(repoRoot, 'package.json'));
    expect(bad.status).toBe(2);
    expect(bad.stderr.trim().split('\n')).toHaveLength(1);
  });

  it('runs `check` through its bundled check process with the default thresholds read from the sources', () => {
    const dir = fs.mkdtempSync(path.join(out, 'check-'));
    fs.copyFileSync(path.join(repoRoot, 'test/fixtures/io/wave_24bit.wav'), path.join(dir, 'a.wav'));
    const r = runBuilt('check', dir, '--jobs', '1', '--quiet', '--json', path.join(dir, 'r.json'));
    expect([0, 1], r.stderr).toContain(r.status);
    const report = JSON.parse(fs.readFileSync(path.join(dir, 'r.json'), 'utf8'));
    expect(report.files).toHaveLength(1);
    expect(report.files[0].status).not.toBe('error');
    expect(Object.keys(report.thresholds).length).toBeGreaterThan(5);
  });
});
