/**
 * The registry is the one list: an analysis added through its public API (`registerOperation`),
 * with a report column, an overview cell and a gate, shows up in the command line (its verb and
 * --help), in diagnose, in the editor's lists, in the batch report's CSV/HTML/JSON and in the
 * check's gates, with no other file touched. The operation here is a throw-away one (crest
 * factor), removed again after the test.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyses, findOperation, registerOperation } from '../../dsp/ops/registry.ts';
import { roundTo, sectionNumber } from '../../dsp/ops/sections.ts';
import { num } from '../../dsp/ops/params.ts';
import type { AnalysisOp } from '../../dsp/ops/types.ts';
import { BugError } from '../../dsp/errors.ts';
import { runCheck } from '../../main/check/index.ts';
import { COLUMNS, type CheckReport } from '../../main/check/report.ts';
import { defaultThresholds, mergeThresholds, METRICS } from '../../main/check/thresholds.ts';
import { openAudio } from '../../main/io/reader.ts';
import { writeAudio } from '../../main/io/writer.ts';
import { checkedAnalysisTitles } from '../../renderer/src/lib/operation-lists.ts';
import { runCli } from '../helpers/cli.ts';

interface CrestResult { peak: number; rms: number; crestFactorDb: number }

const crest: AnalysisOp<CrestResult> = {
  kind: 'analysis',
  name: 'crest',
  key: 'crest',
  title: 'Crest factor',
  summary: 'Peak over RMS of the whole file, in dB (a throw-away operation of the registry test).',
  params: [
    { name: 'channel', flag: 'crest-channel', type: 'integer', label: 'Channel', help: 'Only this channel (1 = first); by default all of them.', min: 1, max: 64 },
  ],
  async run(source, params) {
    const only = num(params, 'channel');
    let peak = 0, sum = 0, n = 0;
    for await (const block of source.blocks()) {
      block.forEach((ch, c) => {
        if (only !== undefined && c !== only - 1) return;
        for (const v of ch) {
          peak = Math.max(peak, Math.abs(v));
          sum += v * v;
          n++;
        }
      });
    }
    const rms = Math.sqrt(sum / Math.max(1, n));
    return { peak, rms, crestFactorDb: 20 * Math.log10(peak / rms) };
  },
  findings: (r) => [{ title: `Crest factor ${r.crestFactorDb.toFixed(1)} dB`, sentence: `Peaks stand ${r.crestFactorDb.toFixed(1)} dB above the RMS level.`, severity: 'info' }],
  columns: [{ header: 'crestFactorDb', get: (s) => roundTo(sectionNumber(s, 'crest', 'crestFactorDb'), 2) }],
  overview: [{ heading: 'Crest dB', text: (s) => sectionNumber(s, 'crest', 'crestFactorDb')?.toFixed(1) ?? '—' }],
  metrics: [
    {
      id: 'crest.factorDb', label: 'crest factor', unit: 'dB', digits: 1, get: (s) => sectionNumber(s, 'crest', 'crestFactorDb'),
      defaultRule: { warnBelow: 6, comment: 'Peaks less than 6 dB above the RMS level: heavily limited programme.' },
    },
  ],
};

let dir: string;
let sineFile: string;
let unregister: () => void;

beforeAll(async () => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-register-'));
  sineFile = path.join(dir, 'sine.wav');
  // 1 s of a 1 kHz sine at 48 kHz: exactly 1000 periods of 48 samples, peak sample exactly 0.5.
  const fs48 = 48000;
  const x = Float64Array.from({ length: fs48 }, (_, i) => 0.5 * Math.sin((2 * Math.PI * 1000 * i) / fs48));
  async function* blocks() {
    yield [x, x];
  }
  await writeAudio(sineFile, { sampleRateHz: fs48, channelCount: 2, blocks: blocks() }, { bitsPerSample: 32, sampleFormat: 'float', dither: false });
  unregister = registerOperation(crest);
});

afterAll(() => {
  unregister();
  fs.rmSync(dir, { recursive: true, force: true });
});

// Source: exact identity — a sine's peak is √2 times its RMS over whole periods: 20·log10 √2 = 3.0103 dB.
const SINE_CREST_DB = 20 * Math.log10(Math.SQRT2);

describe('an operation registered through the public API', () => {
  it('is a verb of the command line, with --help from its params', async () => {
    expect((await runCli('--help')).out).toMatch(/crest\s+Peak over RMS/);
    const help = await runCli('crest', '--help');
    expect(help.code).toBe(0);
    expect(help.out).toContain('--crest-channel');
    const r = await runCli('crest', sineFile, '--json');
    expect(r.code).toBe(0);
    const json = JSON.parse(r.out) as { file: { path: string }; crest: CrestResult };
    expect(json.crest.crestFactorDb).toBeCloseTo(SINE_CREST_DB, 6);
    expect((await runCli('crest', sineFile, '--crest-channel', '0')).code).toBe(2); // below its min
  });

  it('runs in diagnose', async () => {
    const r = await runCli('diagnose', sineFile, '--json');
    expect(r.code).toBe(0);
    const json = JSON.parse(r.out) as { crest: CrestResult; findings: { op: string }[] };
    expect(json.crest.crestFactorDb).toBeCloseTo(SINE_CREST_DB, 6);
    expect(json.findings.some((f) => f.op === 'crest')).toBe(true);
  });

  it("is in the editor's list of analyses", () => {
    expect(checkedAnalysisTitles()).toContain('Crest factor');
    expect(checkedAnalysisTitles().at(-1)).toBe('Crest factor'); // after the built-in analyses
  });

  it('adds its column, overview cell and gate to the batch report', async () => {
    const out = path.join(dir, 'out');
    fs.mkdirSync(out);
    const lines: string[] = [];
    const code = await runCheck(
      [sineFile, '--json', path.join(out, 'r.json'), '--csv', path.join(out, 'r.csv'), '--report', path.join(out, 'r.html'), '--quiet'],
      { opener: openAudio, out: (s) => void lines.push(s), err: (s) => void lines.push(s) },
    );
    expect(code).toBe(0); // warn only
    const report = JSON.parse(fs.readFileSync(path.join(out, 'r.json'), 'utf8')) as CheckReport;
    expect(report.thresholds['crest.factorDb']).toEqual({ warnBelow: 6 });
    const [entry] = report.files;
    expect(entry!.status).toBe('warn');
    expect(entry!.reasons).toContain('warn: crest factor 3.0 dB < 6.0 dB');
    const [header, row] = fs.readFileSync(path.join(out, 'r.csv'), 'utf8').split('\r\n');
    const cols = header!.split(',');
    expect(cols.indexOf('crestFactorDb')).toBe(cols.indexOf('reversedChannels') + 1); // after the built-in analyses' columns
    expect(row!.split(',')[cols.indexOf('crestFactorDb')]).toBe('3.01');
    const html = fs.readFileSync(path.join(out, 'r.html'), 'utf8');
    expect(html).toContain('<th>Crest dB</th>');
    expect(html).toContain('<td class="n">3.0</td>');
    expect(html).toContain('<dt>crestFactorDb</dt><dd>3.01</dd>');
    // A thresholds file names the gate like any other, and may switch it off.
    expect(mergeThresholds(defaultThresholds(), { 'crest.factorDb': null }, 'mine.json')['crest.factorDb']).toBeUndefined();
  });

  it('refuses a second operation with a name, key, column or metric already taken', () => {
    expect(() => registerOperation({ ...crest })).toThrow(BugError);
    expect(() => registerOperation({ ...crest, name: 'crest2' })).toThrow(/JSON key "crest"/);
    expect(() => registerOperation({ ...crest, name: 'crest2', key: 'crest2' })).toThrow(/column "crestFactorDb"/);
    expect(() => registerOperation({ ...crest, name: 'crest2', key: 'crest2', columns: [] })).toThrow(/metric "crest.factorDb"/);
  });

  it('leaves everything again when removed', () => {
    const again = registerOperation({ ...crest, name: 'crest3', key: 'crest3', title: 'Crest 3', columns: [{ header: 'crest3', get: () => 1 }], metrics: [{ ...crest.metrics![0]!, id: 'crest3.factorDb' }] });
    expect(findOperation('crest3')).toBeDefined();
    expect(METRICS['crest3.factorDb']).toBeDefined();
    expect(COLUMNS.some((c) => c.header === 'crest3')).toBe(true);
    again();
    expect(findOperation('crest3')).toBeUndefined();
    expect(analyses().some((a) => a.name === 'crest3')).toBe(false);
    expect(METRICS['crest3.factorDb']).toBeUndefined();
    expect(COLUMNS.some((c) => c.header === 'crest3')).toBe(false);
    expect(() => mergeThresholds(defaultThresholds(), { 'crest3.factorDb': { warnAt: 1 } }, 'mine.json')).toThrow(/unknown metric/);
  });
});
