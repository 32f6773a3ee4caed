import { type ParseArgsConfig, parseArgs } from 'node:util';
import { ShoalError } from '../core/index.js';

/**
 * Command-line parsing on `node:util`'s parseArgs, with messages that name the command and the option.
 * Every command takes `--help` and `--verbose` (show stack traces).
 */
export type OptionSpec = NonNullable<ParseArgsConfig['options']>;

export interface Parsed {
  readonly values: Readonly<Record<string, string | boolean | undefined>>;
  readonly positionals: readonly string[];
}

const COMMON: OptionSpec = {
  help: { type: 'boolean', short: 'h' },
  verbose: { type: 'boolean' },
};

export function parse(command: string, args: readonly string[], options: OptionSpec): Parsed {
  try {
    const { values, positionals } = parseArgs({
      args: [...args],
      options: { ...COMMON, ...options },
      allowPositionals: true,
      strict: true,
    });
    return { values: values as Parsed['values'], positionals };
  } catch (e) {
    throw new ShoalError('invalid-parameter', `${(e as Error).message} (see shoal ${command} --help)`);
  }
}

/** A string option, or undefined. */
export function text(parsed: Parsed, name: string): string | undefined {
  const v = parsed.values[name];
  return typeof v === 'string' ? v : undefined;
}

/** A whole-number option ≥ `min`, or undefined; anything else is refused naming the option. */
export function whole(parsed: Parsed, name: string, min = 1): number | undefined {
  const v = text(parsed, name);
  if (v === undefined) return undefined;
  const n = Number(v.replaceAll('_', ''));
  if (!(Number.isInteger(n) && n >= min)) {
    throw new ShoalError(
      'invalid-parameter',
      `--${name} must be a whole number ≥ ${min}, got ${JSON.stringify(v)}`,
    );
  }
  return n;
}

/** A number option, or undefined; anything else is refused naming the option. */
export function decimal(parsed: Parsed, name: string): number | undefined {
  const v = text(parsed, name);
  if (v === undefined) return undefined;
  const n = Number(v);
  if (v.trim() === '' || !Number.isFinite(n)) {
    throw new ShoalError('invalid-parameter', `--${name} must be a number, got ${JSON.stringify(v)}`);
  }
  return n;
}

/** Exactly `count` positional arguments, named for the message. */
export function positionals(command: string, parsed: Parsed, names: readonly string[]): string[] {
  if (parsed.positionals.length !== names.length) {
    const want = names.map((n) => `<${n}>`).join(' ');
    throw new ShoalError(
      'invalid-parameter',
      `expected ${want}, got ${parsed.positionals.length === 0 ? 'nothing' : parsed.positionals.map((p) => JSON.stringify(p)).join(' ')} (see shoal ${command} --help)`,
    );
  }
  return [...parsed.positionals];
}
