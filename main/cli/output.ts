/** Printing: one JSON object on stdout for --json; progress and messages on stderr. */

/** JSON with typed arrays as arrays and non-finite numbers as null. */
export function toJson(value: unknown): string {
  return JSON.stringify(
    value,
    (_k, v) => {
      if (typeof v === 'number' && !Number.isFinite(v)) return null;
      if (ArrayBuffer.isView(v) && !(v instanceof DataView)) return Array.from(v as unknown as ArrayLike<number>);
      return v;
    },
    2,
  );
}

/**
 * Progress on stderr for work longer than about two seconds, only when stderr is a terminal and
 * --quiet is not given. One line, rewritten in place.
 */
export class Progress {
  readonly #start = Date.now();
  readonly #enabled: boolean;
  #shown = false;
  #last = 0;
  constructor(
    readonly label: string,
    quiet: boolean,
    readonly stream: NodeJS.WriteStream = process.stderr,
  ) {
    this.#enabled = !quiet && Boolean(stream.isTTY);
  }

  update(fraction: number, detail = ''): void {
    if (!this.#enabled) return;
    const now = Date.now();
    if (now - this.#start < 2000 || now - this.#last < 200) return;
    this.#last = now;
    const f = Math.min(1, Math.max(0, fraction));
    const elapsed = (now - this.#start) / 1000;
    const left = f > 0.02 ? (elapsed * (1 - f)) / f : NaN;
    const eta = Number.isFinite(left) ? `, about ${Math.ceil(left)} s left` : '';
    this.stream.write(`\r${this.label}: ${(f * 100).toFixed(0).padStart(3)} %${eta}${detail ? ' ' + detail : ''}   `);
    this.#shown = true;
  }

  done(): void {
    if (this.#shown) this.stream.write('\r\x1b[K');
    this.#shown = false;
  }
}

/** A readable multi-line rendering of a result object for people (the default without --json). */
export function humanize(value: unknown, indent = ''): string {
  const lines: string[] = [];
  // Six significant digits: a delay of 0.0120356 s keeps its sub-sample part, a gain of 0.3464 no trailing zeros.
  const fmtNum = (n: number) => (Number.isInteger(n) ? String(n) : String(Number(n.toPrecision(6))));
  const walk = (v: unknown, key: string, pad: string) => {
    if (v === null || v === undefined) {
      lines.push(`${pad}${key}: —`);
    } else if (typeof v === 'number') {
      lines.push(`${pad}${key}: ${Number.isFinite(v) ? fmtNum(v) : '—'}`);
    } else if (typeof v === 'string' || typeof v === 'boolean') {
      lines.push(`${pad}${key}: ${v}`);
    } else if (Array.isArray(v) || ArrayBuffer.isView(v)) {
      const arr = Array.from(v as ArrayLike<unknown>);
      if (arr.length <= 8 && arr.every((x) => typeof x !== 'object' || x === null)) {
        lines.push(`${pad}${key}: ${arr.map((x) => (typeof x === 'number' ? fmtNum(x) : String(x))).join(', ')}`);
      } else if (arr.every((x) => typeof x === 'object' && x !== null && !Array.isArray(x)) && arr.length <= 32) {
        lines.push(`${pad}${key}:`);
        arr.forEach((x, i) => walk(x, `[${i + 1}]`, pad + '  '));
      } else {
        lines.push(`${pad}${key}: (${arr.length} values; use --json)`);
      }
    } else if (typeof v === 'object') {
      lines.push(`${pad}${key}:`);
      for (const [k, x] of Object.entries(v as Record<string, unknown>)) walk(x, k, pad + '  ');
    }
  };
  if (value && typeof value === 'object' && !Array.isArray(value)) {
    for (const [k, x] of Object.entries(value as Record<string, unknown>)) walk(x, k, indent);
  } else {
    walk(value, 'value', indent);
  }
  return lines.join('\n');
}
