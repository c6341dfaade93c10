/** The session file: the source (name, path, size, MD5 of its audio bytes) and the steps. JSON. */
import type { Step } from './steps.ts';

export interface SessionSource {
  readonly name: string;
  readonly path: string | null;
  readonly sizeBytes: number;
  readonly audioMd5: string;
}

export interface Session {
  readonly source: SessionSource;
  readonly steps: readonly Step[];
}

export const SESSION_KIND = 'reelwright-session';

export function sessionText(source: SessionSource, steps: readonly Step[]): string {
  return JSON.stringify({ kind: SESSION_KIND, version: 1, savedAt: new Date().toISOString(), source, steps }, null, 2) + '\n';
}

/** Parses and checks a session file; throws with a one-line reason. */
export function parseSession(text: string): Session {
  let j: unknown;
  try { j = JSON.parse(text); } catch { throw new Error('not a session file (not JSON)'); }
  const o = j as { kind?: unknown; version?: unknown; source?: Record<string, unknown>; steps?: unknown };
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
    return st as unknown as Step;
  });
  return { source: { name: s.name, path: s.path as string | null, sizeBytes: s.sizeBytes, audioMd5: s.audioMd5 }, steps };
}
