#!/usr/bin/env node
// Builds the command line to JavaScript with esbuild, so `reelwright` starts without compiling
// TypeScript: `npm install` runs it (the `prepare` script); `npm run build:cli` runs it by hand;
// bin/reelwright.mjs runs it again when a source listed in the build's manifest has changed.
//
// What is built comes from the imports alone (no list of verbs): main/cli/index.ts and everything
// it imports, dynamic imports as lazily loaded chunks. Two run-time references are followed too:
//  - `new URL('./NAME.mjs', import.meta.url)` naming a worker-thread entry beside its source (a
//    small file that registers tsx and imports `new URL('./WORKER.ts', import.meta.url)`): WORKER.ts
//    is bundled to build/cli/NAME.mjs, where the bundled code's own URL finds it;
//  - any other `new URL('./FILE', import.meta.url)` (a JSON of defaults, say) keeps reading the
//    file from the source tree.
// Packages from node_modules stay imports (resolved from the project's node_modules at run time).
import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

export const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
export const outDir = path.join(root, 'build/cli');
export const manifestPath = path.join(outDir, 'manifest.json');
/** The one entry point of the command line; the bin wrapper imports its output, index.mjs. */
const CLI_ENTRY = 'main/cli/index.ts';

const URL_REF = /new URL\(\s*(['"])(\.{1,2}\/[^'"]+)\1\s*,\s*import\.meta\.url\s*\)/g;

/** If `file` is a worker entry stub (registers tsx, imports one .ts by URL), the .ts it loads. */
function workerSourceOf(file) {
  if (!file.endsWith('.mjs') || !fs.existsSync(file)) return null;
  const text = fs.readFileSync(file, 'utf8');
  if (!/from ['"]tsx\/esm\/api['"]/.test(text)) return null;
  const refs = [...text.matchAll(URL_REF)].map((m) => m[2]).filter((r) => r.endsWith('.ts'));
  if (refs.length !== 1) throw new Error(`${path.relative(root, file)}: a worker entry must import exactly one .ts file by new URL(…, import.meta.url)`);
  return path.resolve(path.dirname(file), refs[0]);
}

/** esbuild plugin: rewrites run-time file references (see the header) and collects worker entries. */
function runtimeReferences(workers, outDir) {
  return {
    name: 'reelwright-runtime-references',
    setup(build) {
      build.onLoad({ filter: /\.(ts|mjs)$/ }, async (args) => {
        if (args.path.includes(`${path.sep}node_modules${path.sep}`)) return undefined;
        const text = await fs.promises.readFile(args.path, 'utf8');
        const dir = path.dirname(args.path);
        const contents = text.replace(URL_REF, (whole, q, rel) => {
          const target = path.resolve(dir, rel);
          const worker = workerSourceOf(target);
          if (worker) {
            const name = path.basename(target, '.mjs');
            const known = workers.get(name);
            if (known && known !== worker) throw new Error(`two worker entries are both named ${name}.mjs (${path.relative(root, known)}, ${path.relative(root, worker)}): rename one`);
            workers.set(name, worker);
            return `new URL(${q}./${name}.mjs${q}, import.meta.url)`;
          }
          if (target.endsWith('.ts')) return whole;
          const back = path.relative(outDir, target).split(path.sep).join('/');
          return `new URL(${q}${back.startsWith('.') ? back : './' + back}${q}, import.meta.url)`;
        });
        return { contents, loader: args.path.endsWith('.ts') ? 'ts' : 'js' };
      });
    },
  };
}

/** One file written atomically (temporary name, then rename), so a concurrent reader never sees half of it. */
function writeAtomic(file, bytes) {
  const tmp = `${file}.${process.pid}-${randomBytes(4).toString('hex')}.tmp`;
  fs.writeFileSync(tmp, bytes);
  fs.renameSync(tmp, file);
}

/**
 * Builds build/cli/. `clean` empties the folder first (the install-time build); without it, files
 * are replaced one by one and chunks of an earlier build are left for processes still using them.
 * `out` is build/cli unless a test builds elsewhere. Returns the manifest written (its `externals`
 * are the packages and node: modules the build imports at run time).
 */
export async function buildCli({ clean = true, quiet = false, out = outDir } = {}) {
  const esbuild = await import('esbuild');
  const t0 = performance.now();
  const workers = new Map();
  let result;
  // Worker entries are discovered while bundling; build again until no new one appears.
  for (let pass = 0; ; pass++) {
    const before = workers.size;
    const entryPoints = [{ in: path.join(root, CLI_ENTRY), out: 'index' }, ...[...workers].map(([name, src]) => ({ in: src, out: name }))];
    result = await esbuild.build({
      absWorkingDir: root,
      entryPoints,
      outdir: out,
      bundle: true,
      splitting: true,
      format: 'esm',
      platform: 'node',
      target: 'node20',
      packages: 'external',
      outExtension: { '.js': '.mjs' },
      chunkNames: 'chunk-[hash]',
      sourcemap: 'linked',
      metafile: true,
      write: false,
      logLevel: 'silent',
      plugins: [runtimeReferences(workers, out)],
    });
    if (workers.size === before) break;
    if (pass > 8) throw new Error('worker entries keep appearing; giving up');
  }
  if (clean) fs.rmSync(out, { recursive: true, force: true });
  fs.mkdirSync(out, { recursive: true });
  for (const f of result.outputFiles) writeAtomic(f.path, f.contents);

  const inputs = Object.keys(result.metafile.inputs)
    .filter((p) => !p.startsWith('node_modules/') && !p.includes('/node_modules/'))
    .concat(path.relative(root, fileURLToPath(import.meta.url)).split(path.sep).join('/'));
  const files = {};
  for (const rel of [...new Set(inputs)].sort()) {
    const st = fs.statSync(path.join(root, rel));
    files[rel] = { mtimeMs: st.mtimeMs, size: st.size };
  }
  const externals = [...new Set(Object.values(result.metafile.outputs).flatMap((o) => o.imports.filter((i) => i.external).map((i) => i.path)))].sort();
  const manifest = { entry: 'index.mjs', workers: [...workers.keys()].map((n) => `${n}.mjs`), externals, inputs: files };
  writeAtomic(path.join(out, 'manifest.json'), JSON.stringify(manifest, null, 1) + '\n');
  if (!quiet) {
    const bytes = result.outputFiles.filter((f) => f.path.endsWith('.mjs')).reduce((s, f) => s + f.contents.length, 0);
    process.stderr.write(`built the command line: ${path.relative(root, out)}/ (${Object.keys(files).length} sources, ${(bytes / 1024).toFixed(0)} KiB of JavaScript, workers: ${manifest.workers.join(', ') || 'none'}) in ${((performance.now() - t0) / 1000).toFixed(2)} s\n`);
  }
  return manifest;
}

/** Whether the manifest's sources are unchanged since the build (size and modification time). */
export function isFresh(manifest) {
  for (const [rel, was] of Object.entries(manifest.inputs)) {
    const st = fs.statSync(path.join(root, rel), { throwIfNoEntry: false });
    if (!st || st.mtimeMs !== was.mtimeMs || st.size !== was.size) return false;
  }
  return true;
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  await buildCli({ clean: true, quiet: process.argv.includes('--quiet') });
}
