/** Order statistics for the evaluation tables (nearest-rank percentiles, common practice). */
export function percentile(values: readonly number[], p: number): number {
  if (values.length === 0) return NaN;
  const s = [...values].sort((a, b) => a - b);
  const rank = Math.ceil((p / 100) * s.length);
  return s[Math.min(s.length - 1, Math.max(0, rank - 1))]!;
}

export interface Summary {
  n: number;
  median: number;
  p95: number;
  worst: number;
}

export function summarise(values: readonly number[]): Summary {
  return { n: values.length, median: percentile(values, 50), p95: percentile(values, 95), worst: values.length ? Math.max(...values) : NaN };
}

/** Wilson score interval (95 %) of a proportion k/n, for rates quoted from small samples. */
export function wilson(k: number, n: number): [number, number] {
  if (n === 0) return [NaN, NaN];
  const z = 1.96;
  const p = k / n;
  const d = 1 + (z * z) / n;
  const c = p + (z * z) / (2 * n);
  const h = z * Math.sqrt((p * (1 - p)) / n + (z * z) / (4 * n * n));
  return [(c - h) / d, (c + h) / d];
}
