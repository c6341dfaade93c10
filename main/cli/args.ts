/**
 * Command-line parsing driven by ParamSpecs. Values may start with '-' (`--gain -0.5`), so every
 * non-boolean flag takes the next argument as its value; booleans take no value (`--keep-formants`)
 * or an explicit one (`--keep-formants=false`), and `--no-X` negates.
 */
import { ParameterError } from '../../dsp/errors.ts';

export interface ParsedArgs {
  positionals: string[];
  /** Flag name (without dashes) → raw value (true for a bare boolean flag). */
  flags: Map<string, string | boolean>;
}

export interface FlagShape {
  /** Flags that take no value. */
  booleans: ReadonlySet<string>;
  /** Flags that take a value. */
  values: ReadonlySet<string>;
}

export function parseArgs(argv: readonly string[], shape: FlagShape): ParsedArgs {
  const positionals: string[] = [];
  const flags = new Map<string, string | boolean>();
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === '--') {
      positionals.push(...argv.slice(i + 1));
      break;
    }
    if (a === '-h') {
      flags.set('help', true);
      continue;
    }
    if (!a.startsWith('--') || a.length === 2) {
      positionals.push(a);
      continue;
    }
    const eq = a.indexOf('=');
    const name = a.slice(2, eq < 0 ? undefined : eq);
    const inline = eq < 0 ? undefined : a.slice(eq + 1);
    if (shape.booleans.has(name)) {
      flags.set(name, inline === undefined ? true : inline);
    } else if (name.startsWith('no-') && shape.booleans.has(name.slice(3))) {
      flags.set(name.slice(3), false);
    } else if (shape.values.has(name)) {
      const v = inline ?? argv[++i];
      if (v === undefined) throw new ParameterError(`--${name} needs a value`);
      flags.set(name, v);
    } else {
      throw new ParameterError(`unknown option --${name}`);
    }
  }
  return { positionals, flags };
}
