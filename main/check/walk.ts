/**
 * Walking the folders a batch names: every regular file below them (recursively; hidden files
 * skipped, each real folder visited once so symlink loops end), and the paths named explicitly.
 */
import fs from 'node:fs';
import path from 'node:path';

export interface WalkOptions {
  /** Keeps a file found inside a folder (by name); explicitly named files are kept whatever their name. */
  accept?: (name: string) => boolean;
  /** An entry inside a folder that cannot be stat'ed (a dangling link): kept when this returns true. */
  keepUnreadable?: (name: string) => boolean;
  /** A named path that does not exist: throw to refuse it; by default it is left out. */
  onMissing?: (p: string) => void;
  /** Resolve kept paths to absolute ones (default: as found). */
  absolute?: boolean;
  /** Keep a named path that is neither a folder nor a regular file (it is then refused by its reader). */
  keepNamedSpecial?: boolean;
}

/** The files under `paths`, in no particular order (callers sort). */
export function walkFiles(paths: readonly string[], o: WalkOptions = {}): Set<string> {
  const found = new Set<string>();
  const seenDirs = new Set<string>();
  const keep = (p: string) => found.add(o.absolute ? path.resolve(p) : p);
  const walk = (dir: string) => {
    let real: string;
    try {
      real = fs.realpathSync(dir);
    } catch {
      return;
    }
    if (seenDirs.has(real)) return;
    seenDirs.add(real);
    let names: fs.Dirent[];
    try {
      names = fs.readdirSync(dir, { withFileTypes: true });
    } catch {
      return;
    }
    for (const d of names) {
      if (d.name.startsWith('.')) continue;
      const p = path.join(dir, d.name);
      let st: fs.Stats;
      try {
        st = fs.statSync(p);
      } catch {
        if (o.keepUnreadable?.(d.name)) keep(p);
        continue;
      }
      if (st.isDirectory()) walk(p);
      else if (st.isFile() && (o.accept ? o.accept(d.name) : true)) keep(p);
    }
  };
  for (const p of paths) {
    let st: fs.Stats;
    try {
      st = fs.statSync(p);
    } catch {
      o.onMissing?.(p);
      continue;
    }
    if (st.isDirectory()) walk(p);
    else if (st.isFile() || o.keepNamedSpecial) keep(p);
  }
  return found;
}
