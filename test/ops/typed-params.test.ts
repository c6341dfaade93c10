/**
 * An operation's parameters reach its run typed by its own `params` list (defineAnalysis /
 * defineCorrection): a misspelt name or a wrong type does not compile (the `@ts-expect-error`
 * lines fail `npm run typecheck` if they ever compile), and the values are the validated ones.
 */
import { describe, expect, it } from 'vitest';
import { defineAnalysis, silentContext } from '../../dsp/ops/types.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { MemorySource } from '../../dsp/source.ts';

const probe = defineAnalysis<number>()({
  kind: 'analysis',
  name: 'typed-probe',
  key: 'typedProbe',
  title: 'Typed probe',
  summary: 'Adds its parameters (a test operation).',
  params: [
    { name: 'toneHz', flag: 'tone', type: 'number', label: 'Tone', help: 'A frequency.', unit: 'Hz', min: 1, max: 20000 },
    { name: 'mode', flag: 'mode', type: 'enum', choices: ['plain', 'doubled'], label: 'Mode', help: 'How to add.', default: 'plain' },
    { name: 'rangeSeconds', flag: 'range', type: 'range', label: 'Range', help: 'MIN:MAX.', min: 0, max: 10 },
  ],
  async run(_source, params) {
    const hz: number | undefined = params.toneHz;
    const mode: 'plain' | 'doubled' | undefined = params.mode;
    const range: readonly [number, number] | undefined = params.rangeSeconds;
    // @ts-expect-error a misspelt parameter does not compile
    void params.toneHZ;
    // @ts-expect-error a number is not text
    const asText: string | undefined = params.toneHz;
    void asText;
    return ((hz ?? 0) + (range ? range[1] - range[0] : 0)) * (mode === 'doubled' ? 2 : 1);
  },
});

describe('typed parameters', () => {
  it('reach run validated, with the defaults filled', async () => {
    const source = new MemorySource([new Float64Array(10)], 1000);
    // Source: exact arithmetic on the given values (1000 + (3 − 1)) × 2.
    expect(await probe.run(source, validateParams(probe.params, { toneHz: 1000, mode: 'doubled', rangeSeconds: [1, 3] }), silentContext)).toBe(2004);
    expect(await probe.run(source, validateParams(probe.params, { toneHz: 440 }), silentContext)).toBe(440);
    expect(() => validateParams(probe.params, { toneHz: 'loud' })).toThrow(/expected a number/);
  });
});
