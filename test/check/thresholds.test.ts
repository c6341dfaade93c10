/**
 * Threshold rules and report rendering of `reelwright check`, on injected analysis results (no
 * audio is read here). The numbers are made up for the rules; what is checked is the logic.
 */
import { describe, expect, it } from 'vitest';
import { defaultThresholds, documentedDefaults, judge, mergeThresholds, METRICS } from '../../main/check/thresholds.ts';
import { reportCsv, COLUMNS, type CheckReport } from '../../main/check/report.ts';
import { reportHtml } from '../../main/check/report-html.ts';
import type { FileEntry } from '../../main/check/check-file.ts';
import { suggestionCommand } from '../../main/cli/index.ts';
import { ParameterError } from '../../dsp/errors.ts';

// The default rules with their comments, as the analyses declare them beside their metrics (they
// were one JSON file, main/check/default-thresholds.json, before the report came from the registry).
const defaults: Record<string, unknown> = Object.fromEntries(documentedDefaults().map((d) => [d.id, { ...d.rule, $comment: d.comment }]));

function entry(over: Partial<FileEntry> = {}): FileEntry {
  return {
    file: { path: '/archive/reel 12/side A.wav', format: 'BWF', sampleRateHz: 96000, channels: 2, bitsPerSample: 24, sampleFormat: 'int', durationSeconds: 1800, frames: 1800 * 96000, chunks: [], audioMd5: 'abc' },
    findings: [],
    notes: [],
    seconds: 12,
    levels: {
      channels: [
        { channel: 1, peakDbfs: -3, truePeakDbtp: -2.8, rmsDbfs: -20, dcOffset: 0.0001, clippedSamples: 0, clippedRunCount: 0 },
        { channel: 2, peakDbfs: -3.5, truePeakDbtp: -3.1, rmsDbfs: -21, dcOffset: -0.0002, clippedSamples: 0, clippedRunCount: 0 },
      ],
      loudnessLufs: -24,
      truePeakDbtp: -2.8,
      dropouts: [],
      silence: { headSeconds: 2, tailSeconds: 5, thresholdDbfs: -60, allSilent: false },
      bandwidthHz: 15000,
    },
    ...over,
  };
}

describe('check thresholds', () => {
  const t = defaultThresholds();

  it('documents every default rule and knows every metric it names', () => {
    for (const [k, v] of Object.entries(defaults)) {
      if (k.startsWith('$')) continue;
      expect(METRICS[k], k).toBeDefined();
      expect(typeof (v as { $comment?: string }).$comment, `${k} has a $comment`).toBe('string');
    }
    expect(Object.keys(t).length).toBe(Object.keys(defaults).filter((k) => !k.startsWith('$')).length);
  });

  it('passes a clean transfer', () => {
    expect(judge(entry(), t)).toEqual({ status: 'pass', reasons: [] });
  });

  it('warns and fails at the documented limits, worst first', () => {
    const e = entry();
    const lv = e.levels as { channels: { clippedRunCount: number }[]; truePeakDbtp: number };
    lv.channels[0]!.clippedRunCount = 1; // warnAt 1
    expect(judge(e, t)).toEqual({ status: 'warn', reasons: ['warn: clipped runs 1 ≥ 1'] });
    lv.channels[1]!.clippedRunCount = 9; // 10 in all: failAt 10
    lv.truePeakDbtp = -0.2; // warnAt −0.5
    const j = judge(e, t);
    expect(j.status).toBe('fail');
    expect(j.reasons).toEqual(['fail: clipped runs 10 ≥ 10', 'warn: true peak -0.2 dBTP ≥ -0.5 dBTP']);
  });

  it('skips rules whose analysis is absent and judges the sections of other analyses by the contract', () => {
    const e = entry({
      speed: { factor: 1.0116, cents: 20, method: 'hum', confidence: 0.9 },
      echo: { present: true, delaySeconds: 0.012, gain: 0.4, confidence: 0.8 },
      printThrough: { present: false },
      reversed: { channels: [{ channel: 1, likely: false, score: 0.1 }, { channel: 2, likely: true, score: 0.9 }] },
      azimuth: { delaySeconds: 30e-6, coherence: 0.2 }, // too incoherent to judge
    });
    const j = judge(e, t);
    expect(j.status).toBe('fail');
    expect(j.reasons).toEqual(['fail: echo level -8.0 dB ≥ -15.0 dB', 'fail: reversed channels 1 ≥ 1', 'warn: speed error 20.0 cents ≥ 10.0 cents']);
    // A speed measured with little confidence is not judged.
    (e.speed as { confidence: number }).confidence = 0.2;
    expect(judge(e, t).reasons.some((r) => r.includes('speed'))).toBe(false);
  });

  it('fails a float file holding NaN or infinite samples', () => {
    expect(judge(entry({ nonFiniteSamples: 3 }), t)).toEqual({ status: 'fail', reasons: ['fail: NaN or infinite samples 3 ≥ 1'] });
  });

  it('fails unreadable files with the reason', () => {
    expect(judge({ file: { path: 'x.wav' }, findings: [], notes: [], seconds: 0, error: 'truncated data chunk' }, t)).toEqual({
      status: 'fail',
      reasons: ['fail: unreadable: truncated data chunk'],
    });
  });

  it('takes user rules one by one, null switches one off, and refuses unknown names', () => {
    const m = mergeThresholds(t, { 'levels.loudnessLufs': { warnBelow: -20 }, 'levels.bandwidthHz': null }, 'mine.json');
    expect(m['levels.loudnessLufs']).toEqual({ warnBelow: -20 });
    expect(m['levels.bandwidthHz']).toBeUndefined();
    expect(m['levels.clippedRuns']).toEqual(t['levels.clippedRuns']);
    expect(judge(entry(), m).reasons).toEqual(['warn: loudness -24.0 LUFS < -20.0 LUFS']);
    expect(() => mergeThresholds(t, { 'levels.loudnes': { warnAt: 1 } }, 'mine.json')).toThrow(ParameterError);
    expect(() => mergeThresholds(t, { 'levels.loudnessLufs': { warnAbove: 1 } }, 'mine.json')).toThrow(/warnAt, failAt/);
    expect(() => mergeThresholds(t, { 'levels.loudnessLufs': { warnAt: '3' } }, 'mine.json')).toThrow(/must be a number/);
  });
});

describe('check reports', () => {
  const good = entry();
  const bad = entry({
    file: { ...entry().file, path: '/archive/reel "7", side B.wav' },
    azimuth: { delaySeconds: 40e-6, coherence: 0.95, monoNullHz: 12500, azimuthArcMinutes: null, verdict: 'head' },
    findings: [
      { op: 'azimuth', title: 'Channel 2 lags channel 1 by 40.0 µs', sentence: 'Channel 2 lags channel 1 by 40.0 µs <really>.', severity: 'warn', suggestion: { op: 'align', params: { delaySeconds: 40e-6 } } },
    ],
    notes: [{ op: 'flutter', reason: 'no steady test tone near 3150 Hz was found' }],
  });
  const report: CheckReport = {
    tool: 'reelwright check', version: '0.1.0', createdAt: '2026-01-01T00:00:00.000Z', paths: ['/archive'],
    thresholds: defaultThresholds(),
    summary: { files: 3, pass: 1, warn: 0, fail: 2, resumed: 0, seconds: 1 },
    files: [
      { ...good, status: 'pass', reasons: [] },
      { ...bad, ...judge(bad, defaultThresholds()) },
      { file: { path: '/archive/broken.wav' }, findings: [], notes: [], seconds: 0, error: 'not a WAV, AIFF or FLAC file', status: 'fail', reasons: ['fail: unreadable: not a WAV, AIFF or FLAC file'] },
    ],
  };

  it('writes CSV with a header row and RFC 4180 quoting', () => {
    // Source: RFC 4180 §2 — fields with commas, quotes or line breaks are quoted, quotes doubled.
    const lines = reportCsv(report).split('\r\n');
    expect(lines[0]).toBe(COLUMNS.map((c) => c.header).join(','));
    expect(lines.length).toBe(5); // header, 3 rows, final empty string after the last CRLF
    expect(lines[2]!.startsWith('"/archive/reel ""7"", side B.wav",fail,fail: inter-channel delay 40.0 µs ≥ 25.0 µs,')).toBe(true);
    const cols = COLUMNS.map((c) => c.header);
    expect(lines[1]!.split(',')[cols.indexOf('loudnessLufs')]).toBe('-24');
    expect(lines[3]).toContain('not a WAV');
  });

  it('renders one self-contained HTML page with overview, findings, fixes and plots', () => {
    const html = reportHtml(report, suggestionCommand);
    expect(html.startsWith('<!doctype html>')).toBe(true);
    expect(html).not.toMatch(/<script|<link|<img|@import|url\(/i);
    // The only URL is the SVG namespace identifier, which is never fetched.
    expect([...html.matchAll(/https?:\/\/[^"'\s<)]+/g)].map((m) => m[0]).every((u) => u === 'http://www.w3.org/2000/svg')).toBe(true);
    expect(html).toContain('<span class="badge fail">2 fail</span>');
    expect((html.match(/<section class="file"/g) ?? []).length).toBe(3);
    expect(html).toContain('&lt;really&gt;'); // escaped
    expect(html).toContain(`reelwright align '/archive/reel &quot;7&quot;, side B.wav' '/archive/reel &quot;7&quot;, side B.align.wav' --delay 0.00004`);
    expect(html).toContain('no steady test tone near 3150 Hz');
    expect(html).toContain('Could not be checked: not a WAV');
  });
});
