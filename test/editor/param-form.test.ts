/**
 * The editor's parameter checks (renderer/src/lib/param-form.ts) against the operations
 * themselves: whenever a card says a step cannot render, the correction's own prepare() refuses
 * it (ParameterError), and whenever it says nothing, prepare() takes the values. Units and
 * words: delays in ms/µs, gains in dB, no command-line flags in what the editor shows.
 */
import { describe, expect, it } from 'vitest';
import { ParameterError, NotFoundError } from '../../dsp/errors.ts';
import { corrections, findOperation, analyses } from '../../dsp/ops/registry.ts';
import { validateParams } from '../../dsp/ops/params.ts';
import { silentContext, type CorrectionOp, type ParamValues } from '../../dsp/ops/types.ts';
import { MemorySource } from '../../dsp/source.ts';
import { checkNumber, checkRange, displayOf, editorWords, gainWords, initialParams, modeOf, stepProblems, switchMode, visibleParams } from '../../renderer/src/lib/param-form.ts';
import { seededRng } from '../helpers/rng.ts';

const RATE = 8000;
const r = seededRng(5);
const noise = () => Float64Array.from({ length: RATE * 2 }, () => (r() - 0.5) * 0.2);
const source = new MemorySource([noise(), noise()], RATE);
const facts = { sampleRateHz: RATE, channelCount: 2, frames: RATE * 2 };
const op = (n: string) => findOperation(n) as CorrectionOp;

/** Whether the operation itself refuses the values (validation, then starting to render). */
async function refused(name: string, params: ParamValues): Promise<boolean> {
  const o = op(name);
  try {
    const p = validateParams(o.params, params);
    const rendering = await o.prepare(source, p, silentContext);
    // Pull one block: some checks run when the output starts.
    const it = rendering.blocks[Symbol.asyncIterator]();
    await it.next();
    await it.return?.();
    return false;
  } catch (e) {
    if (e instanceof ParameterError) return true;
    if (e instanceof NotFoundError) return false; // accepted, but nothing to measure in noise
    throw e;
  }
}

const cases: [string, ParamValues][] = [
  ['unecho', { delaySeconds: 0, gain: 0.5 }],
  ['unecho', { delaySeconds: 0.012, gain: 0.5 }],
  ['unecho', { delaySeconds: 0.00001, gain: 0.5 }],
  ['unecho', { delaySeconds: 5, gain: 0.5 }],
  ['unecho', { gain: 0.5 }],
  ['unecho', { delaySeconds: 0.012, gain: 1 }],
  ['unecho', { delaySeconds: 0.012, gain: -0.99 }],
  ['unecho', { delaySeconds: 0.012, gain: 0.3, channel: 3 }],
  ['varispeed', { factor: 1.02 }],
  ['varispeed', { factor: 1.02, fromHum: '50' }],
  ['varispeed', { undo: 1.0293 }],
  ['varispeed', {}],
  ['varispeed', { fromHum: '50', fromTone: 1000 }],
  ['varispeed', { semitones: 1, cents: 10 }],
  ['stretch', {}],
  ['stretch', { ratio: 1.1 }],
  ['transpose', {}],
  ['transpose', { cents: 30 }],
  ['reverse', { fromSeconds: 3 }],
  ['reverse', { fromSeconds: 1, toSeconds: 0.5 }],
  ['reverse', { fromSeconds: 0.5, toSeconds: 1 }],
  ['reverse', { channels: [3] }],
  ['reverse', { channels: [2] }],
  ['align', { delaySeconds: 0.0001 }],
];

describe('step checks agree with the operations', () => {
  for (const [name, params] of cases) {
    it(`${name} ${JSON.stringify(params)}`, async () => {
      // Source: the operation's own prepare() (dsp/ops), the one that renders.
      const editorSays = stepProblems(name, op(name).params, params, facts).size > 0;
      expect(editorSays).toBe(await refused(name, params));
    });
  }
});

describe('fields in the editor’s words', () => {
  it('shows delays in ms, the delay between channels in µs, and checks typed text in those units', () => {
    const echoDelay = op('unecho').params.find((p) => p.name === 'delaySeconds')!;
    const alignDelay = op('align').params.find((p) => p.name === 'delaySeconds')!;
    expect(displayOf(echoDelay)).toEqual({ unit: 'ms', scale: 1e3 });
    expect(displayOf(alignDelay)).toEqual({ unit: 'µs', scale: 1e6 });
    expect(checkNumber(echoDelay, '12.05')).toEqual({ value: 0.01205, message: null });
    expect(checkNumber(echoDelay, '12,05').value).toBeCloseTo(0.01205, 15);
    expect(checkNumber(alignDelay, '−12').value).toBeCloseTo(-12e-6, 15);
    expect(checkNumber(alignDelay, '60000').message).toBe('Must be between −50000 µs and 50000 µs.');
    expect(checkNumber(echoDelay, '12 ms').message).toBe('Not a number.');
    const ch = op('unecho').params.find((p) => p.name === 'channel')!;
    expect(checkNumber(ch, '1.5').message).toBe('A whole number, please.');
    const range = op('unecho').params.find((p) => p.name === 'rangeSeconds')!;
    expect(checkRange(range, '40', '20').message).toBe('The lower end must be below the upper end.');
    expect(checkRange(range, '1', '').message).toMatch(/both ends/);
    expect(checkRange(range, '1', '500').value).toEqual([0.001, 0.5]);
  });

  it('gives a linear gain in dB (20·log10|g|)', () => {
    // Source: exact identities, 20·log10(0.5) = −6.0206 dB, 20·log10(0.1) = −20 dB.
    expect(gainWords(0.5)).toBe('−6.0 dB');
    expect(gainWords(-0.1)).toBe('−20.0 dB, inverted');
  });

  it('never shows a command-line flag: help texts, messages and findings name the fields', () => {
    const specs = [...corrections(), ...analyses()].flatMap((o) => o.params);
    for (const o of [...corrections(), ...analyses()]) {
      for (const p of o.params) expect(editorWords(p.help, o.params), `${o.name}.${p.name}`).not.toMatch(/--[a-z]/);
    }
    expect(editorWords('--gain needs --delay', op('unecho').params)).toBe('“Gain” needs “Delay”');
    expect(editorWords('--factor/--undo set the speed', specs)).not.toMatch(/--/);
  });
});

describe('varispeed: one way of setting the speed at a time', () => {
  const specs = op('varispeed').params;
  it('shows only the chosen way’s fields, and switching clears the other ways', () => {
    expect(modeOf('varispeed', { undo: 1.03 })?.id).toBe('undo');
    expect(modeOf('varispeed', { followCurve: true, fromHum: '60' })?.id).toBe('hum');
    expect(modeOf('varispeed', { followCurve: true })?.id).toBe('drift');
    expect(visibleParams('varispeed', specs, { undo: 1.03, quality: 'archive' }).map((p) => p.name)).toEqual(['undo', 'quality', 'rateHz']);
    const p = switchMode('varispeed', { undo: 1.03, quality: 'draft' }, 'pitch');
    expect(p).toEqual({ quality: 'draft' });
    expect(visibleParams('varispeed', specs, p, 'pitch').map((x) => x.name)).toEqual(['semitones', 'cents', 'quality', 'rateHz']);
    // Values of another way win over the way last chosen (a session, an undo).
    expect(modeOf('varispeed', { factor: 1.1 }, 'pitch')?.id).toBe('factor');
    expect(switchMode('varispeed', p, 'tone')).toEqual({ quality: 'draft', fromTone: 1000 });
    expect(initialParams('varispeed', { quality: 'archive' })).toEqual({ quality: 'archive', followCurve: true });
  });
});
