/**
 * The layers of ARCHITECTURE.md, checked on the import graph (TypeScript's parser over every
 * file of dsp/, main/, renderer/, bin/):
 * - dsp/ imports nothing outside dsp/ (no package, no Node, no main/ or renderer/ file);
 * - dsp/'s algorithms never import dsp/ops (operations are built on algorithms, not the reverse);
 * - the editor (renderer/src) takes nothing but types from main/ (the bridge contract): no run-time
 *   import (the build's own Node-side config in renderer/*.ts may share main/bridge/security.ts);
 * - no import cycle anywhere (static or dynamic imports; type-only ones are erased).
 * Source: the layer table of ARCHITECTURE.md and DEVELOPERS.md ("Layers"). The rules are also run
 * on small made-up graphs, so each one is seen to fail.
 */
import { describe, expect, it } from 'vitest';
import { importCycles, importGraph, importsOf, type ImportEdge } from '../helpers/import-graph.ts';
import { repoRoot } from '../helpers/cli.ts';

const inside = (f: string | null, dir: string) => f !== null && f.startsWith(`${dir}/`);

/** Every broken rule, one line each. */
export function layerViolations(edges: readonly ImportEdge[]): string[] {
  const out: string[] = [];
  for (const e of edges) {
    const what = `${e.from} imports ${e.specifier}`;
    if (inside(e.from, 'dsp') && !inside(e.to, 'dsp')) out.push(`dsp/ imports only dsp/: ${what}`);
    if (inside(e.from, 'dsp') && !inside(e.from, 'dsp/ops') && inside(e.to, 'dsp/ops')) out.push(`dsp algorithms do not import dsp/ops: ${what}`);
    if (inside(e.from, 'renderer/src') && inside(e.to, 'main') && !e.typeOnly) out.push(`renderer/src imports only types from main/: ${what}`);
  }
  for (const c of importCycles(edges)) out.push(`import cycle: ${c.join(' → ')}`);
  return out;
}

describe('layers', () => {
  it('hold across dsp/, main/, renderer/ and bin/', () => {
    const edges = importGraph(repoRoot, ['dsp', 'main', 'renderer', 'bin']);
    expect(edges.length).toBeGreaterThan(500); // the graph was read
    expect(edges.filter((e) => e.from.startsWith('renderer/') && e.to?.startsWith('dsp/')).length).toBeGreaterThan(10);
    expect(layerViolations(edges)).toEqual([]);
  });

  it('each rule fails on a graph that breaks it', () => {
    const files: Record<string, string> = {
      'dsp/levels/a.ts': "import { x } from '../../main/io/reader.ts';\nimport fs from 'node:fs';\nimport type { OpContext } from '../ops/types.ts';",
      'dsp/ops/types.ts': "export type OpContext = {};",
      'renderer/src/b.ts': "import type { Bridge } from '../../main/bridge/contract.ts';\nimport { fileName } from '../../main/bridge/validate.ts';",
      'renderer/src/c.svelte': "<script lang=\"ts\">\n  import { type Bridge } from '../../main/bridge/contract.ts';\n</script>",
      'main/cli/index.ts': "export const run = () => import('../check/index.ts');",
      'main/check/index.ts': "import { run } from '../cli/index.ts';",
      'main/bridge/contract.ts': 'export interface Bridge {}',
      'main/bridge/validate.ts': 'export const fileName = 1;',
      'main/io/reader.ts': 'export const x = 1;',
    };
    const edges = Object.entries(files).flatMap(([f, text]) => importsOf(f, text, (rel) => rel in files));
    expect(layerViolations(edges)).toEqual([
      'dsp/ imports only dsp/: dsp/levels/a.ts imports ../../main/io/reader.ts',
      'dsp/ imports only dsp/: dsp/levels/a.ts imports node:fs',
      'dsp algorithms do not import dsp/ops: dsp/levels/a.ts imports ../ops/types.ts',
      'renderer/src imports only types from main/: renderer/src/b.ts imports ../../main/bridge/validate.ts',
      'import cycle: main/check/index.ts → main/cli/index.ts → main/check/index.ts',
    ]);
  });
});
