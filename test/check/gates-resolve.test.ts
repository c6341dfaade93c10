/**
 * Every default gate resolves on the demo recording: each rule's metric reads fields the
 * analyses really produce, so renaming a JSON field cannot switch a gate off unnoticed. The demo
 * (assets/demo, invented: a 1 kHz line-up tone, a desk reflection, an azimuth error, 2.93 % fast)
 * is checked as `check` checks a file, with `--tone 1000` so the wow-and-flutter gates have a tone
 * to read, and as if listed in a manifest so the fixity gates apply.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { checkFile, type FileEntry } from '../../main/check/check-file.ts';
import { defaultThresholds, judge, resolveMetric, unresolvedGates, type Resolution } from '../../main/check/thresholds.ts';
import { openAudio } from '../../main/io/reader.ts';
import { registerOperation } from '../../dsp/ops/registry.ts';
import { levels } from '../../dsp/ops/levels.ts';
import { sectionNumber } from '../../dsp/ops/sections.ts';
import { demoPath } from '../helpers/cli.ts';

let entry: FileEntry;

beforeAll(async () => {
  const r = await checkFile({ path: demoPath, params: { flutter: { toneHz: 1000 } } }, openAudio, () => {});
  if (r.kind !== 'entry') throw new Error('expected an entry');
  entry = { ...r.entry, manifest: 'match' };
}, 120_000);

describe('the default gates on the demo', () => {
  it('every default rule names a metric that reads fields the results have', () => {
    const rules = Object.keys(defaultThresholds());
    const resolved: Record<string, Resolution> = Object.fromEntries(rules.map((id) => [id, resolveMetric(id, entry)]));
    for (const [id, r] of Object.entries(resolved)) {
      expect(r.kind, `${id}: ${JSON.stringify(r)}`).not.toBe('unknown');
      expect(r.kind, `${id}: ${JSON.stringify(r)}`).not.toBe('missing');
    }
    // The demo has no print-through (its synthesiser adds none: assets/demo/thornbury-reel7.json),
    // so that gate has nothing to judge; every other gate reads a number.
    const absent = Object.entries(resolved).filter(([, r]) => r.kind === 'absent').map(([id]) => id);
    expect(absent).toEqual(['printThrough.levelDb']);
    expect(entry.printThrough).toMatchObject({ present: false });
    const values = Object.fromEntries(Object.entries(resolved).flatMap(([id, r]) => (r.kind === 'value' ? [[id, r.value]] : [])));
    console.log('default gates on the demo:', JSON.stringify(values));
    // Spot checks against the demo's own description (assets/demo/thornbury-reel7.json, from its synthesiser).
    expect(values['file.sampleRateHz']).toBe(48000);
    expect(values['speed.absCents']).toBeCloseTo(1200 * Math.log2(1.0293), 0); // transferred 2.93 % fast
    expect(values['echo.gainDb']).toBeCloseTo(20 * Math.log10(0.42), 0); // a desk reflection of gain 0.42
    expect(values['azimuth.delayMicroseconds']).toBeCloseTo(12, 0); // 12 µs between the channels
    expect(values['flutter.meanSpeedErrorPercent']).toBeCloseTo(2.93, 1); // the 1 kHz tone plays at 1029.3 Hz
    expect(unresolvedGates([entry], defaultThresholds())).toEqual([]);
  });

  it('a gate whose metric reads a field the result lacks is reported, not skipped silently', () => {
    const remove = registerOperation({
      ...levels,
      name: 'levels-misspelt', key: 'levelsMisspelt', title: 'Levels (misspelt gate)', columns: [], overview: [],
      metrics: [{ id: 'levels.truePeakDbTP', label: 'true peak', unit: 'dBTP', digits: 1, get: (s) => sectionNumber(s, 'levels', 'truePeakDbTP') }],
    });
    try {
      const thresholds = { ...defaultThresholds(), 'levels.truePeakDbTP': { warnAt: -20 } };
      expect(resolveMetric('levels.truePeakDbTP', entry)).toEqual({ kind: 'missing', fields: ['levels.truePeakDbTP'] });
      // The rule cannot judge (the demo peaks at −9.4 dBTP, which would cross −20)…
      expect(judge(entry, thresholds).reasons.some((r) => r.includes('true peak -9'))).toBe(false);
      // …and the check says so in one line.
      expect(unresolvedGates([entry], thresholds)).toEqual(['warning: rule "levels.truePeakDbTP" was not applied to 1 file: the results have no levels.truePeakDbTP']);
    } finally {
      remove();
    }
  });
});

