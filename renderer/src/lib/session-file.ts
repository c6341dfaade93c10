/** The session file: the source (name, path, size, MD5 of its audio bytes) and the steps. JSON. */
import type { Step } from './steps.ts';
import type { Marker } from '../worker/protocol.ts';

export interface SessionSource {
  readonly name: string;
  readonly path: string | null;
  readonly sizeBytes: number;
  readonly audioMd5: string;
}

export interface Session {
  readonly source: SessionSource;
  readonly steps: readonly Step[];
  /** Named positions in the original recording (absent in older sessions). */
  readonly markers: readonly Marker[];
}

export const SESSION_KIND = 'reelwright-session';

export function sessionText(source: SessionSource, steps: readonly Step[], markers: readonly Marker[] = []): string {
  return JSON.stringify({ kind: SESSION_KIND, version: 1, savedAt: new Date().toISOString(), source, steps, markers }, null, 2) + '\n';
}

/** Parses and checks a session file; throws with a one-line reason. */
export function parseSession(text: string): Session {
  let j: unknown;
  try { j = JSON.parse(text); } catch { throw new Error('not a session file (not JSON)'); }
  const o = j as { kind?: unknown; version?: unknown; source?: Record<string, unknown>; steps?: unknown; markers?: unknown };
  if (o?.kind !== SESSION_KIND) throw new Error('not a Reelwright session file');
  if (o.version !== 1) throw new Error(`session version ${String(o.version)} is not supported`);
  const s = o.source;
  if (!s || typeof s.name !== 'string' || typeof s.audioMd5 !== 'string' || !/^[0-9a-f]{32}$/.test(s.audioMd5) ||
      typeof s.sizeBytes !== 'number' || (s.path !== null && typeof s.path !== 'string')) {
    throw new Error('session source is incomplete (name, path, sizeBytes, audioMd5)');
  }
  if (!Array.isArray(o.steps)) throw new Error('session has no step list');
  const steps: Step[] = o.steps.map((x: unknown, i: number) => {
    const st = x as Record<string, unknown>;
    if (typeof st?.id !== 'string' || typeof st.op !== 'string' || typeof st.enabled !== 'boolean' || typeof st.params !== 'object' || st.params === null) {
      throw new Error(`session step ${i + 1} is malformed`);
    }
    const r = st.rangeSeconds;
    if (r !== undefined && !(Array.isArray(r) && r.length === 2 && r.every((x) => typeof x === 'number' && Number.isFinite(x)) && r[0] < r[1])) {
      throw new Error(`session step ${i + 1} has a malformed range`);
    }
    if (st.basis !== undefined && st.basis !== 'original' && st.basis !== 'input') throw new Error(`session step ${i + 1} has an unknown basis`);
    return st as unknown as Step;
  });
  if (o.markers !== undefined && !Array.isArray(o.markers)) throw new Error('session markers are not a list');
  const markers: Marker[] = ((o.markers as unknown[] | undefined) ?? []).map((x: unknown, i: number) => {
    const m = x as Record<string, unknown>;
    if (typeof m?.id !== 'string' || typeof m.name !== 'string' || typeof m.seconds !== 'number' || !Number.isFinite(m.seconds) || m.seconds < 0) {
      throw new Error(`session marker ${i + 1} is malformed`);
    }
    return { id: m.id, name: m.name, seconds: m.seconds };
  });
  return { source: { name: s.name, path: s.path as string | null, sizeBytes: s.sizeBytes, audioMd5: s.audioMd5 }, steps, markers };
}
