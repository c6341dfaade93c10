/**
 * Recent recordings and sessions, kept in the page's local storage (names, paths where the
 * shell gives them, and a session's own text so it can be reopened without a picker).
 */
export interface RecentItem {
  readonly kind: 'recording' | 'session';
  readonly name: string;
  readonly path: string | null;
  readonly sizeBytes: number;
  /** A session's JSON (sessions are small). */
  readonly text?: string;
  readonly at?: number;
}

const KEY = 'reelwright.recent.v1';
const MAX = 8;
/** Sessions larger than this are remembered by name only. */
const MAX_TEXT = 200_000;

function storage(): Storage | null {
  try { return typeof localStorage === 'undefined' ? null : localStorage; } catch { return null; }
}

export function recentItems(): RecentItem[] {
  const st = storage();
  if (!st) return [];
  try {
    const v = JSON.parse(st.getItem(KEY) ?? '[]') as unknown;
    return Array.isArray(v) ? (v as RecentItem[]).filter((x) => x && (x.kind === 'recording' || x.kind === 'session') && typeof x.name === 'string') : [];
  } catch { return []; }
}

const listeners = new Set<() => void>();
/** Called whenever the list changes. */
export function onRecentChange(f: () => void): () => void {
  listeners.add(f);
  return () => listeners.delete(f);
}

export function rememberRecent(item: RecentItem): void {
  const st = storage();
  if (!st) return;
  const same = (x: RecentItem) => x.kind === item.kind && x.name === item.name && x.path === item.path;
  const keep = item.text && item.text.length > MAX_TEXT ? { ...item, text: undefined } : item;
  const list = [{ ...keep, at: Date.now() }, ...recentItems().filter((x) => !same(x))].slice(0, MAX);
  try { st.setItem(KEY, JSON.stringify(list)); } catch { /* storage full or refused: the list is a convenience */ }
  for (const f of listeners) f();
}

export function forgetRecent(): void {
  storage()?.removeItem(KEY);
  for (const f of listeners) f();
}
