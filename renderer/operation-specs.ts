/**
 * The editor page reads only the operations' specs (titles, parameters, timing); their work runs
 * in the worker. This build step leaves out of every operation definition in dsp/ops/ the members
 * that do the work (IMPLEMENTATION_MEMBERS: run, prepare, findings, …) and those only the batch
 * report reads (REPORT_MEMBERS), so the page bundle does not carry them or anything only they
 * import (the algorithms are reached through `load`).
 * Build only: Vite applies a config's plugins to the page, not to worker bundles, when building
 * (the worker keeps whole operations); the dev server serves whole operations to both.
 */
import type { Plugin } from 'vite';
import { IMPLEMENTATION_MEMBERS, REPORT_MEMBERS } from '../dsp/ops/types.ts';

interface Node {
  type: string;
  start: number;
  end: number;
  [k: string]: unknown;
}

const OP_MODULE = /[\\/]dsp[\\/]ops[\\/][a-z-]+\.ts$/;

export function operationSpecs(): Plugin {
  const strip = new Set<string>([...IMPLEMENTATION_MEMBERS, ...REPORT_MEMBERS]);
  return {
    name: 'reelwright:operation-specs',
    apply: 'build',
    enforce: 'post',
    transform(code, id) {
      if (!OP_MODULE.test(id.split('?')[0]!)) return null;
      const program = this.parse(code) as unknown as { body: Node[] };
      const cuts: [number, number][] = [];
      for (const statement of program.body) {
        const decl = statement.type === 'ExportNamedDeclaration' ? (statement.declaration as Node | null) : null;
        if (decl?.type !== 'VariableDeclaration') continue;
        for (const d of decl.declarations as Node[]) {
          // `{ kind: …, … }`, or the definition helpers' `defineAnalysis<R>()({ … })` / `defineCorrection({ … })`.
          let init = d.init as Node | null;
          if (init?.type === 'CallExpression') init = ((init.arguments as Node[])[0] ?? null) as Node | null;
          if (init?.type !== 'ObjectExpression') continue;
          const props = init.properties as Node[];
          const isOperation = props.some((p) => keyOf(p) === 'kind' && ['analysis', 'correction'].includes(String((p.value as Node).value)));
          if (!isOperation) continue;
          props.forEach((p, i) => {
            if (strip.has(keyOf(p) ?? '')) cuts.push([p.start, i + 1 < props.length ? props[i + 1]!.start : p.end]);
          });
        }
      }
      if (!cuts.length) return null;
      let out = code;
      for (const [a, b] of cuts.sort((x, y) => y[0] - x[0])) out = out.slice(0, a) + out.slice(b);
      return { code: out, map: null };
    },
  };
}

function keyOf(p: Node): string | undefined {
  if (p.type !== 'Property') return undefined;
  const k = p.key as Node;
  return k.type === 'Identifier' ? String(k.name) : k.type === 'Literal' ? String(k.value) : undefined;
}
