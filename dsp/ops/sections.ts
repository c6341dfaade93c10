/**
 * Reading a file's JSON sections: the analysis results keyed as in the contract (`levels`,
 * `speed`, `echo`, …), as `--json` prints them and the batch report keeps them. The report's
 * columns and the check's gate metrics read them through these helpers, never trusting their
 * shape (a resumed report may come from an older version). The one copy of these getters.
 */

/** A file's sections: contract keys → plain JSON values, plus the check's own fields (`error`, `manifest`…). */
export type Sections = Readonly<Record<string, unknown>>;

/** The value if it is a plain object (not an array, not null). */
export const objectOf = (v: unknown): Record<string, unknown> | undefined =>
  v !== null && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : undefined;

/** The value if it is a finite number. */
export const numberOf = (v: unknown): number | undefined => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);

/** The value if it is an array. */
export const arrayOf = (v: unknown): unknown[] | undefined => (Array.isArray(v) ? v : undefined);

/** Array or typed array as plain numbers (anything else NaN). */
export const numbersOf = (v: unknown): number[] | undefined =>
  Array.isArray(v) || ArrayBuffer.isView(v) ? Array.from(v as ArrayLike<unknown>, (x) => (typeof x === 'number' ? x : NaN)) : undefined;

/** Rounded to `digits` decimals, undefined kept. */
export const roundTo = (v: number | undefined, digits: number): number | undefined =>
  v === undefined ? undefined : Math.round(v * 10 ** digits) / 10 ** digits;

/** `section.field` as a finite number (`sectionNumber(s, 'levels', 'loudnessLufs')`). */
export const sectionNumber = (s: Sections, section: string, field: string): number | undefined => numberOf(objectOf(s[section])?.[field]);

/** `v` with `digits` decimals and an optional unit, or "—" when there is none (report tables). */
export const fixedOrDash = (v: number | undefined, digits: number, unit = ''): string => (v === undefined ? '—' : `${v.toFixed(digits)}${unit}`);
