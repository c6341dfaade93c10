/**
 * The project's import graph, read with the TypeScript parser: every static import and export,
 * and every `import('…')`, of every .ts/.mjs/.svelte file under the given folders, with whether
 * it is type-only (erased at compile time). Used by the layer test (test/layers/layers.test.ts).
 */
import fs from 'node:fs';
import path from 'node:path';
import ts from 'typescript';

export interface ImportEdge {
  /** Importing file, relative to the root, with forward slashes. */
  from: string;
  /** The specifier as written. */
  specifier: string;
  /** Resolved file relative to the root for a relative specifier; null for a package or built-in. */
  to: string | null;
  /** Erased at compile time (`import type`, or every name imported as a type). */
  typeOnly: boolean;
  /** `import('…')`. */
  dynamic: boolean;
}

const SOURCE = /\.(ts|mts|mjs|js|svelte)$/;

/** Every source file under `dirs` (relative to `root`), skipping node_modules, build outputs and dist. */
export function sourceFiles(root: string, dirs: readonly string[]): string[] {
  const out: string[] = [];
  const walk = (rel: string) => {
    for (const d of fs.readdirSync(path.join(root, rel), { withFileTypes: true })) {
      const p = `${rel}/${d.name}`;
      if (d.isDirectory()) {
        if (!['node_modules', 'dist', 'build'].includes(d.name)) walk(p);
      } else if (SOURCE.test(d.name) && !d.name.endsWith('.d.ts')) out.push(p);
    }
  };
  for (const d of dirs) walk(d);
  return out.sort();
}

/** The script of a .svelte file (all `<script>` blocks), else the text itself. */
function scriptOf(file: string, text: string): string {
  if (!file.endsWith('.svelte')) return text;
  return [...text.matchAll(/<script\b[^>]*>([\s\S]*?)<\/script>/g)].map((m) => m[1]).join('\n');
}

/** The imports of one file's text. */
export function importsOf(file: string, text: string, exists: (rel: string) => boolean): ImportEdge[] {
  const sf = ts.createSourceFile(file, scriptOf(file, text), ts.ScriptTarget.ES2022, false, ts.ScriptKind.TS);
  const edges: ImportEdge[] = [];
  const add = (specifier: string, typeOnly: boolean, dynamic: boolean) => {
    let to: string | null = null;
    if (specifier.startsWith('.')) {
      const base = path.posix.normalize(path.posix.join(path.posix.dirname(file), specifier));
      to = [base, `${base}.ts`, `${base}/index.ts`].find(exists) ?? base;
    }
    edges.push({ from: file, specifier, to, typeOnly, dynamic });
  };
  const visit = (node: ts.Node) => {
    if (ts.isImportDeclaration(node) && ts.isStringLiteral(node.moduleSpecifier)) {
      const c = node.importClause;
      const typeOnly =
        !!c && (c.isTypeOnly || (!c.name && !!c.namedBindings && ts.isNamedImports(c.namedBindings) && c.namedBindings.elements.length > 0 && c.namedBindings.elements.every((e) => e.isTypeOnly)));
      add(node.moduleSpecifier.text, typeOnly, false);
    } else if (ts.isExportDeclaration(node) && node.moduleSpecifier && ts.isStringLiteral(node.moduleSpecifier)) {
      const typeOnly = node.isTypeOnly || (!!node.exportClause && ts.isNamedExports(node.exportClause) && node.exportClause.elements.length > 0 && node.exportClause.elements.every((e) => e.isTypeOnly));
      add(node.moduleSpecifier.text, typeOnly, false);
    } else if (ts.isCallExpression(node) && node.expression.kind === ts.SyntaxKind.ImportKeyword && node.arguments[0] && ts.isStringLiteral(node.arguments[0])) {
      add(node.arguments[0].text, false, true);
    } else if (ts.isImportTypeNode(node) && ts.isLiteralTypeNode(node.argument) && ts.isStringLiteral(node.argument.literal)) {
      add(node.argument.literal.text, true, false);
    }
    ts.forEachChild(node, visit);
  };
  visit(sf);
  return edges;
}

/** The graph of every file under `dirs`. */
export function importGraph(root: string, dirs: readonly string[]): ImportEdge[] {
  const exists = (rel: string) => fs.existsSync(path.join(root, rel)) && fs.statSync(path.join(root, rel)).isFile();
  return sourceFiles(root, dirs).flatMap((f) => importsOf(f, fs.readFileSync(path.join(root, f), 'utf8'), exists));
}

/** Cycles among files through run-time edges (static and dynamic imports, not type-only ones); each as a path a → … → a. */
export function importCycles(edges: readonly ImportEdge[]): string[][] {
  const next = new Map<string, string[]>();
  for (const e of edges) if (!e.typeOnly && e.to) (next.get(e.from) ?? next.set(e.from, []).get(e.from)!).push(e.to);
  // Tarjan's strongly connected components; a component of two or more files (or a self-import) holds a cycle.
  let index = 0;
  const idx = new Map<string, number>(), low = new Map<string, number>(), stack: string[] = [], on = new Set<string>();
  const cycles: string[][] = [];
  const strong = (v: string) => {
    idx.set(v, index);
    low.set(v, index++);
    stack.push(v);
    on.add(v);
    for (const w of next.get(v) ?? []) {
      if (!idx.has(w)) {
        strong(w);
        low.set(v, Math.min(low.get(v)!, low.get(w)!));
      } else if (on.has(w)) low.set(v, Math.min(low.get(v)!, idx.get(w)!));
    }
    if (low.get(v) === idx.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop()!;
        on.delete(w);
        comp.push(w);
      } while (w !== v);
      if (comp.length > 1 || (next.get(v) ?? []).includes(v)) cycles.push(pathThrough(comp.sort(), next));
    }
  };
  for (const v of [...next.keys()].sort()) if (!idx.has(v)) strong(v);
  return cycles;
}

/** One concrete cycle inside a strongly connected component, for the message. */
function pathThrough(comp: string[], next: Map<string, string[]>): string[] {
  const inComp = new Set(comp);
  const start = comp[0]!;
  const seen = new Map<string, string>();
  const queue = [start];
  while (queue.length) {
    const v = queue.shift()!;
    for (const w of next.get(v) ?? []) {
      if (!inComp.has(w)) continue;
      if (w === start) {
        const p = [start];
        for (let x = v; x !== start; x = seen.get(x)!) p.splice(1, 0, x);
        return [...p, start];
      }
      if (!seen.has(w)) {
        seen.set(w, v);
        queue.push(w);
      }
    }
  }
  return comp;
}
