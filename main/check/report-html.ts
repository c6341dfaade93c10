/**
 * The batch report as one self-contained HTML page: inline CSS and inline SVG plots, no scripts,
 * no fonts, images or links outside the page, so it can be mailed, archived and opened offline.
 * Layout: summary, an overview table (one row per file), then per file the findings in plain
 * words, the suggested corrections as ready command lines, the numbers, and small plots
 * (spectrum, speed curve, level envelope). Pure string building.
 */
import { lineChartSvg } from '../../dsp/plot/svg.ts';
import type { Finding, ParamValues } from '../../dsp/ops/types.ts';
import type { FileEntry } from './check-file.ts';
import { COLUMNS, type CheckReport } from './report.ts';
import { analyses } from '../../dsp/ops/registry.ts';
import { numberOf, numbersOf, objectOf } from '../../dsp/ops/sections.ts';

export type CommandFor = (filePath: string, suggestion: { op: string; params: ParamValues }) => string;

const esc = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
const obj = objectOf, num = numberOf, nums = numbersOf;

const CSS = `
body{margin:0;padding:24px 32px;background:#16181c;color:#efe6d2;font:14px/1.45 system-ui,sans-serif}
h1{font-size:22px;margin:0 0 4px}h2{font-size:16px;margin:0 0 8px;word-break:break-all}h3{font-size:13px;margin:14px 0 6px;color:#b9b09c;text-transform:uppercase;letter-spacing:.05em}
.meta{color:#b9b09c;margin-bottom:16px}
table{border-collapse:collapse;margin:8px 0 16px}th,td{padding:4px 8px;border-bottom:1px solid #3a3d45;text-align:left;vertical-align:top}
th{color:#b9b09c;font-weight:600}td.n{text-align:right;font-variant-numeric:tabular-nums}
a{color:#e0a63a}
.badge{display:inline-block;padding:1px 8px;border-radius:9px;font-weight:700;font-size:12px;text-transform:uppercase}
.pass{background:#2f4a2c;color:#cfe8b8}.warn{background:#5a4415;color:#ffd98a}.fail{background:#5c2219;color:#ffb4a4}
section.file{border:1px solid #3a3d45;border-radius:6px;padding:16px;margin:18px 0;background:#1d1f24}
ul.findings{list-style:none;padding:0;margin:0}ul.findings li{margin:4px 0;padding-left:22px;text-indent:-22px}
.sev{display:inline-block;width:18px;text-indent:0;font-weight:700}
.sev-ok{color:#7d9a4a}.sev-info{color:#b9b09c}.sev-warn{color:#e0a63a}.sev-fail{color:#c4553f}
pre{background:#111316;padding:6px 10px;border-radius:4px;overflow-x:auto;margin:4px 0;color:#efe6d2}
.plots{display:flex;flex-wrap:wrap;gap:12px}.plots svg{max-width:100%;height:auto}
dl.numbers{display:grid;grid-template-columns:repeat(auto-fill,minmax(300px,1fr));gap:0 24px;margin:4px 0 12px}
dl.numbers div{display:flex;justify-content:space-between;border-bottom:1px solid #3a3d45;padding:3px 0}dl.numbers dt{color:#b9b09c}dl.numbers dd{margin:0;font-variant-numeric:tabular-nums;word-break:break-all;text-align:right}
.reasons{color:#ffd98a}.error{color:#ffb4a4}
`;

const SEVERITY_MARK: Record<Finding['severity'], string> = { ok: '✓', info: '·', warn: '!', fail: '✗' };

export function reportHtml(report: CheckReport, commandFor: CommandFor): string {
  const s = report.summary;
  const parts: string[] = [];
  parts.push(
    '<!doctype html>',
    '<html lang="en"><head><meta charset="utf-8">',
    '<meta name="viewport" content="width=device-width, initial-scale=1">',
    `<title>Transfer check — ${s.files} file${s.files === 1 ? '' : 's'}</title>`,
    `<style>${CSS}</style></head><body>`,
    '<h1>Transfer check</h1>',
    `<div class="meta">${esc(report.createdAt)} · ${esc(report.paths.join(', '))} · ${s.files} file${s.files === 1 ? '' : 's'}: ` +
      `<span class="badge pass">${s.pass} pass</span> <span class="badge warn">${s.warn} warn</span> <span class="badge fail">${s.fail} fail</span>` +
      (s.resumed ? ` · ${s.resumed} taken over unchanged from the previous report` : '') +
      ` · ${report.tool} ${esc(report.version)}</div>`,
  );
  if (report.manifest) parts.push(manifestSection(report));
  parts.push(overview(report));
  report.files.forEach((e, i) => parts.push(fileSection(e, i, commandFor)));
  parts.push(thresholdTable(report), '</body></html>');
  return parts.join('\n');
}

function badge(status: string | undefined): string {
  const st = status ?? 'fail';
  return `<span class="badge ${esc(st)}">${esc(st)}</span>`;
}

function formatText(e: FileEntry): string {
  const f = e.file;
  if (f.sampleRateHz === undefined) return '—';
  return `${f.format ?? ''} ${(f.sampleRateHz / 1000).toFixed(f.sampleRateHz % 1000 ? 1 : 0)} kHz ${f.bitsPerSample}-bit${f.sampleFormat === 'float' ? ' float' : ''} ${f.channels} ch`;
}

function duration(sec: number | undefined): string {
  if (sec === undefined) return '—';
  const h = Math.floor(sec / 3600), m = Math.floor((sec % 3600) / 60), s = sec % 60;
  return h ? `${h}:${String(m).padStart(2, '0')}:${s.toFixed(0).padStart(2, '0')}` : `${m}:${s.toFixed(1).padStart(4, '0')}`;
}

function overview(report: CheckReport): string {
  const cells = analyses().flatMap((op) => op.overview ?? []);
  const rows = report.files.map((e, i) => {
    return (
      `<tr><td class="n">${i + 1}</td><td><a href="#file-${i + 1}">${esc(e.file.path)}</a></td><td>${badge(e.status)}</td>` +
      `<td class="n">${duration(e.file.durationSeconds)}</td><td>${esc(formatText(e))}</td>` +
      cells.map((c) => `<td class="n">${esc(c.text(e))}</td>`).join('') +
      `<td class="reasons">${esc(e.error ? `unreadable: ${e.error}` : (e.reasons ?? []).map((r) => r.replace(/^(fail|warn): /, '')).join('; '))}</td></tr>`
    );
  });
  return (
    '<h3>Overview</h3><table><thead><tr><th>#</th><th>File</th><th>Status</th><th>Length</th><th>Format</th>' +
    cells.map((c) => `<th>${esc(c.heading)}</th>`).join('') +
    '<th>Problems</th></tr></thead><tbody>' +
    rows.join('') +
    '</tbody></table>'
  );
}

function fileSection(e: FileEntry, i: number, commandFor: CommandFor): string {
  const p: string[] = [];
  p.push(`<section class="file" id="file-${i + 1}"><h2>${i + 1}. ${esc(e.file.path)} ${badge(e.status)}</h2>`);
  if (e.error) p.push(`<p class="error">Could not be checked: ${esc(e.error)}</p>`);
  const reasons = (e.reasons ?? []).filter((r) => !(e.error && r.startsWith('fail: unreadable')));
  if (reasons.length) p.push(`<p class="reasons">${reasons.map(esc).join('<br>')}</p>`);
  if (e.findings.length) {
    p.push('<h3>Findings</h3><ul class="findings">');
    for (const f of e.findings) p.push(`<li><span class="sev sev-${f.severity}">${SEVERITY_MARK[f.severity]}</span>${esc(f.sentence)}</li>`);
    p.push('</ul>');
  }
  const fixes = e.findings.filter((f) => f.suggestion);
  if (fixes.length) {
    p.push('<h3>Suggested corrections</h3>');
    for (const f of fixes) p.push(`<pre>${esc(commandFor(e.file.path, f.suggestion!))}</pre>`);
  }
  const rows = COLUMNS.filter((c) => !['path', 'status', 'reasons', 'error'].includes(c.header))
    .map((c) => [c.header, c.get(e)] as const)
    .filter(([, v]) => v !== undefined && v !== '' && !(typeof v === 'number' && !Number.isFinite(v)));
  if (rows.length) {
    p.push('<h3>Numbers</h3><dl class="numbers">');
    for (const [k, v] of rows) p.push(`<div><dt>${esc(k)}</dt><dd>${esc(String(v))}</dd></div>`);
    p.push('</dl>');
  }
  if (e.notes.length) {
    p.push('<h3>Not reported</h3><ul class="findings">');
    for (const n of e.notes) p.push(`<li><span class="sev sev-info">·</span>${esc(n.op)}: ${esc(n.reason)}</li>`);
    p.push('</ul>');
  }
  const plots = [spectrumPlot(e), speedPlot(e), envelopePlot(e)].filter((x): x is string => x !== undefined);
  if (plots.length) p.push(`<h3>Plots</h3><div class="plots">${plots.join('')}</div>`);
  p.push('</section>');
  return p.join('\n');
}

const SMALL = { width: 480, height: 200 };

function spectrumPlot(e: FileEntry): string | undefined {
  // The compact log-spaced spectrum of `levels` keeps the page small; the full Welch spectrum otherwise.
  const lt = obj(obj(e.levels)?.longTermSpectrum);
  let x = nums(lt?.frequenciesHz), y = nums(lt?.levelsDb);
  if (!x?.length || !y?.length) {
    const sp = obj(e.spectrum);
    x = nums(sp?.frequenciesHz);
    const first = Array.isArray(sp?.levelsDb) ? nums((sp!.levelsDb as unknown[])[0]) : undefined;
    y = first;
    if (!x?.length || !y?.length) return undefined;
    x = x.slice(1);
    y = y.slice(1);
  }
  return lineChartSvg({ ...SMALL, title: 'Long-term spectrum', xLabel: 'Frequency (Hz)', yLabel: 'dBFS', xLog: true, series: [{ label: 'average of channels', x, y }] });
}

function speedPlot(e: FileEntry): string | undefined {
  const sp = obj(obj(e.speed)?.curve);
  const t = nums(sp?.timesSeconds), f = nums(sp?.factors);
  if (t?.length && f?.length && t.length > 1) {
    return lineChartSvg({ ...SMALL, title: 'Speed along the file', xLabel: 'Time (s)', yLabel: 'Speed error (%)', series: [{ label: 'speed', x: t, y: f.map((v) => (v - 1) * 100) }] });
  }
  const fl = obj(obj(e.flutter)?.curve);
  const ft = nums(fl?.timesSeconds), fp = nums(fl?.percent);
  if (ft?.length && fp?.length) {
    return lineChartSvg({ ...SMALL, title: `Speed over the ${num(obj(e.flutter)?.toneHz) ?? ''} Hz test tone`, xLabel: 'Time (s)', yLabel: 'Speed error (%)', series: [{ label: 'tone speed', x: ft, y: fp, color: '#3fa7a0' }] });
  }
  return undefined;
}

function envelopePlot(e: FileEntry): string | undefined {
  const env = obj(obj(e.levels)?.envelope);
  const t = nums(env?.timesSeconds), r = nums(env?.rmsDbfs), m = nums(env?.maxDbfs);
  if (!t?.length || !r?.length) return undefined;
  const series = [{ label: 'loudest 1 ms', x: t, y: m ?? r, color: '#8a7fb8' }, { label: 'RMS', x: t, y: r }];
  const floor = Math.max(-100, Math.min(...r.filter(Number.isFinite)) - 6);
  return lineChartSvg({ ...SMALL, title: 'Level envelope', xLabel: 'Time (s)', yLabel: 'dBFS', yRange: [floor, 0], series });
}

function manifestSection(report: CheckReport): string {
  const m = report.manifest!;
  const ok = m.missing.length === 0 && m.changed.length === 0;
  const list = (title: string, items: string[]) =>
    items.length ? `<h3>${esc(title)} (${items.length})</h3><ul class="findings">${items.map((i) => `<li>${esc(i)}</li>`).join('')}</ul>` : '';
  return (
    `<h3>Fixity</h3><p class="${ok ? 'meta' : 'error'}">Manifest ${esc(m.path)} (SHA-256): ${m.listed} listed, ${m.verified} verified, ` +
    `${m.missing.length} missing, ${m.changed.length} changed, ${m.extra.length} not listed.</p>` +
    list('Missing: listed but not found', m.missing) +
    list('Changed: another checksum', m.changed.map((c) => `${c.path} — listed ${c.expectedSha256}, found ${c.actualSha256}`)) +
    list('Not listed in the manifest', m.extra)
  );
}

function thresholdTable(report: CheckReport): string {
  const rows = Object.entries(report.thresholds).map(([k, r]) => {
    const bits: string[] = [];
    if (r.warnAt !== undefined) bits.push(`warn ≥ ${r.warnAt}`);
    if (r.failAt !== undefined) bits.push(`fail ≥ ${r.failAt}`);
    if (r.warnBelow !== undefined) bits.push(`warn < ${r.warnBelow}`);
    if (r.failBelow !== undefined) bits.push(`fail < ${r.failBelow}`);
    return `<tr><th>${esc(k)}</th><td>${esc(bits.join(', '))}</td></tr>`;
  });
  return `<h3>Thresholds used</h3><table><tbody>${rows.join('')}</tbody></table>`;
}
