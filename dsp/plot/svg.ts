/**
 * Small self-contained SVG line charts (no scripts, no external fonts or links) for spectra,
 * speed curves and level envelopes: used by `spectrum --out`, the batch report and the editor's
 * exports. Pure string building.
 */
export interface Series {
  label: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** CSS colour; defaults cycle through the product palette. */
  color?: string;
  dashed?: boolean;
}

export interface ChartOptions {
  title: string;
  xLabel: string;
  yLabel: string;
  series: readonly Series[];
  xLog?: boolean;
  width?: number;
  height?: number;
  xRange?: readonly [number, number];
  yRange?: readonly [number, number];
}

/** Reelwright's chart palette (ink, amber, teal, brick, moss). */
export const CHART_COLORS = ['#e0a63a', '#3fa7a0', '#c4553f', '#7d9a4a', '#8a7fb8'] as const;

const esc = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
const fmt = (v: number) => (Math.abs(v) >= 1000 ? `${+(v / 1000).toPrecision(3)}k` : `${+v.toPrecision(3)}`);

function niceTicks(lo: number, hi: number, count: number): number[] {
  const span = hi - lo;
  if (!(span > 0)) return [lo];
  const raw = span / count;
  const mag = Math.pow(10, Math.floor(Math.log10(raw)));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? raw;
  const ticks: number[] = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + 1e-9 * span; v += step) ticks.push(+v.toPrecision(12));
  return ticks;
}

function logTicks(lo: number, hi: number): number[] {
  const out: number[] = [];
  for (let e = Math.floor(Math.log10(lo)); e <= Math.ceil(Math.log10(hi)); e++) {
    for (const m of [1, 2, 5]) {
      const v = m * Math.pow(10, e);
      if (v >= lo && v <= hi) out.push(v);
    }
  }
  return out;
}

export function lineChartSvg(o: ChartOptions): string {
  const W = o.width ?? 640, H = o.height ?? 280;
  const left = 56, right = 12, top = 28, bottom = 40;
  const pw = W - left - right, ph = H - top - bottom;
  let xMin = Infinity, xMax = -Infinity, yMin = Infinity, yMax = -Infinity;
  for (const s of o.series) {
    for (let i = 0; i < s.x.length; i++) {
      const x = s.x[i]!, y = s.y[i]!;
      if (!Number.isFinite(x) || !Number.isFinite(y) || (o.xLog && x <= 0)) continue;
      xMin = Math.min(xMin, x);
      xMax = Math.max(xMax, x);
      yMin = Math.min(yMin, y);
      yMax = Math.max(yMax, y);
    }
  }
  if (o.xRange) [xMin, xMax] = o.xRange;
  if (o.yRange) [yMin, yMax] = o.yRange;
  if (!Number.isFinite(xMin)) [xMin, xMax] = [o.xLog ? 1 : 0, 1];
  if (!Number.isFinite(yMin)) [yMin, yMax] = [0, 1];
  if (xMax <= xMin) xMax = xMin + 1;
  if (yMax <= yMin) [yMin, yMax] = [yMin - 1, yMax + 1];
  const xs = (x: number) =>
    left + (o.xLog ? (Math.log(x / xMin) / Math.log(xMax / xMin)) * pw : ((x - xMin) / (xMax - xMin)) * pw);
  const ys = (y: number) => top + (1 - (Math.min(Math.max(y, yMin), yMax) - yMin) / (yMax - yMin)) * ph;
  const parts: string[] = [];
  parts.push(
    `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" font-family="sans-serif" font-size="11">`,
    `<rect width="${W}" height="${H}" fill="#1d1f24"/>`,
    `<text x="${left}" y="17" fill="#efe6d2" font-size="13">${esc(o.title)}</text>`,
  );
  const xt = o.xLog ? logTicks(xMin, xMax) : niceTicks(xMin, xMax, 6);
  for (const t of xt) {
    const x = xs(t).toFixed(1);
    parts.push(`<line x1="${x}" x2="${x}" y1="${top}" y2="${top + ph}" stroke="#3a3d45"/>`);
    parts.push(`<text x="${x}" y="${top + ph + 14}" fill="#b9b09c" text-anchor="middle">${fmt(t)}</text>`);
  }
  const yt = niceTicks(yMin, yMax, 5);
  // Enough decimals to tell neighbouring ticks apart (a narrow range such as 2.9295…2.9310).
  const yStep = yt.length > 1 ? yt[1]! - yt[0]! : 1;
  const yDecimals = Math.min(8, Math.max(0, -Math.floor(Math.log10(yStep))));
  const yLabel = (v: number) => (Math.abs(v) >= 1000 ? fmt(v) : v.toFixed(yDecimals));
  for (const t of yt) {
    const y = ys(t).toFixed(1);
    parts.push(`<line x1="${left}" x2="${left + pw}" y1="${y}" y2="${y}" stroke="#3a3d45"/>`);
    parts.push(`<text x="${left - 6}" y="${(+y + 4).toFixed(1)}" fill="#b9b09c" text-anchor="end">${yLabel(t)}</text>`);
  }
  parts.push(`<text x="${left + pw / 2}" y="${H - 6}" fill="#b9b09c" text-anchor="middle">${esc(o.xLabel)}</text>`);
  parts.push(
    `<text x="12" y="${top + ph / 2}" fill="#b9b09c" text-anchor="middle" transform="rotate(-90 12 ${top + ph / 2})">${esc(o.yLabel)}</text>`,
  );
  o.series.forEach((s, si) => {
    const color = s.color ?? CHART_COLORS[si % CHART_COLORS.length]!;
    const pts: string[] = [];
    // Thin dense series to about two points per horizontal pixel (keep min and max per column).
    const step = Math.max(1, Math.floor(s.x.length / (2 * pw)));
    for (let i = 0; i < s.x.length; i += step) {
      let lo = i, hi = i;
      for (let j = i; j < Math.min(s.x.length, i + step); j++) {
        if (s.y[j]! < s.y[lo]!) lo = j;
        if (s.y[j]! > s.y[hi]!) hi = j;
      }
      for (const j of lo <= hi ? [lo, hi] : [hi, lo]) {
        const x = s.x[j]!, y = s.y[j]!;
        if (!Number.isFinite(x) || !Number.isFinite(y) || (o.xLog && x <= 0) || x < xMin || x > xMax) continue;
        pts.push(`${xs(x).toFixed(1)},${ys(y).toFixed(1)}`);
      }
    }
    parts.push(
      `<polyline fill="none" stroke="${color}" stroke-width="1.4"${s.dashed ? ' stroke-dasharray="4 3"' : ''} points="${pts.join(' ')}"/>`,
    );
    parts.push(`<rect x="${left + pw - 150}" y="${top + 6 + si * 15}" width="10" height="3" fill="${color}"/>`);
    parts.push(`<text x="${left + pw - 136}" y="${top + 10 + si * 15}" fill="#efe6d2">${esc(s.label)}</text>`);
  });
  parts.push(`<rect x="${left}" y="${top}" width="${pw}" height="${ph}" fill="none" stroke="#5a5e68"/>`, '</svg>');
  return parts.join('\n');
}
