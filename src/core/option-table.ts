import { ConfigError, type ConfigIssue } from './errors.js';

/**
 * Options declared once. Each component (learner, detector, ensemble, lifecycle) lists its options in
 * a table — name, type, range, default and one line of documentation — and uses the same table in its
 * constructor (`resolveOptions`) and in the configuration check (`checkOptions`), so that a bad value
 * gets the same message at the same path whether it comes from code or from `shoal.yaml`.
 *
 * @example
 * const TABLE = {
 *   delta: { type: 'number', above: 0, below: 1, default: 0.002, doc: 'δ, the confidence of a cut' },
 *   checkEvery: { type: 'integer', atLeast: 1, default: 32, doc: 'values between two cut checks' },
 * } as const satisfies OptionTable;
 * const options = resolveOptions('adwin', TABLE, given);
 */
export type OptionSpec =
  | {
      readonly type: 'number' | 'integer';
      readonly default: number;
      /** Inclusive and exclusive bounds. */
      readonly atLeast?: number;
      readonly above?: number;
      readonly atMost?: number;
      readonly below?: number;
      readonly doc: string;
    }
  | { readonly type: 'boolean'; readonly default: boolean; readonly doc: string }
  | {
      readonly type: 'choice';
      readonly choices: readonly string[];
      readonly default: string;
      readonly doc: string;
    };

export type OptionTable = Readonly<Record<string, OptionSpec>>;

/** The options a table describes, with their value types. */
export type OptionsOf<T extends OptionTable> = {
  -readonly [K in keyof T]: T[K] extends { type: 'boolean' }
    ? boolean
    : T[K] extends { type: 'choice'; choices: readonly (infer C)[] }
      ? C
      : number;
};

/** The defaults of a table. */
export function defaultsOf<T extends OptionTable>(table: T): OptionsOf<T> {
  const out: Record<string, unknown> = {};
  for (const [name, spec] of Object.entries(table)) out[name] = spec.default;
  return out as OptionsOf<T>;
}

/** The range of a numeric option in words: `an integer ≥ 1`, `a number in (0, 1)`. */
export function describeRange(spec: OptionSpec): string {
  if (spec.type === 'boolean') return 'true or false';
  if (spec.type === 'choice') return `one of ${spec.choices.join(', ')}`;
  const what = spec.type === 'integer' ? 'an integer' : 'a number';
  const low = spec.atLeast ?? spec.above;
  const high = spec.atMost ?? spec.below;
  if (low !== undefined && high !== undefined) {
    return `${what} in ${spec.atLeast !== undefined ? '[' : '('}${low}, ${high}${spec.atMost !== undefined ? ']' : ')'}`;
  }
  if (low !== undefined) return `${what} ${spec.atLeast !== undefined ? '≥' : '>'} ${low}`;
  if (high !== undefined) return `${what} ${spec.atMost !== undefined ? '≤' : '<'} ${high}`;
  return `a finite ${spec.type === 'integer' ? 'integer' : 'number'}`;
}

function show(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'object') return 'a mapping';
  return typeof value === 'string' ? JSON.stringify(value) : String(value);
}

/** The problem with one value, or null when it fits. */
export function checkValue(spec: OptionSpec, value: unknown): Omit<ConfigIssue, 'path'> | null {
  const expected = describeRange(spec);
  const wrong = (code: ConfigIssue['code']) => ({ code, message: `must be ${expected}, got ${show(value)}` });
  switch (spec.type) {
    case 'boolean':
      return typeof value === 'boolean' ? null : wrong('wrong-type');
    case 'choice':
      return typeof value === 'string' && spec.choices.includes(value) ? null : wrong('not-one-of');
    default: {
      if (typeof value !== 'number' || !Number.isFinite(value)) return wrong('wrong-type');
      if (spec.type === 'integer' && !Number.isInteger(value)) return wrong('not-an-integer');
      const fits =
        (spec.atLeast === undefined || value >= spec.atLeast) &&
        (spec.above === undefined || value > spec.above) &&
        (spec.atMost === undefined || value <= spec.atMost) &&
        (spec.below === undefined || value < spec.below);
      return fits ? null : wrong('out-of-range');
    }
  }
}

function join(path: string, key: string): string {
  return path === '' ? key : `${path}.${key}`;
}

/**
 * Check given options against a table, pushing one issue per bad key (unknown, wrong type, out of
 * range) at `path.key`. Keys in `others` belong to the caller (`kind`, nested specs) and are skipped.
 */
export function checkOptions(
  table: OptionTable,
  given: Readonly<Record<string, unknown>>,
  path: string,
  issues: ConfigIssue[],
  others: readonly string[] = ['kind'],
): void {
  for (const [key, value] of Object.entries(given)) {
    if (others.includes(key) || value === undefined) continue;
    const spec = table[key];
    if (spec === undefined) {
      issues.push({
        path: join(path, key),
        code: 'unknown-setting',
        message: `unknown setting; expected one of ${[...others, ...Object.keys(table)].join(', ')}`,
      });
      continue;
    }
    const problem = checkValue(spec, value);
    if (problem !== null) issues.push({ path: join(path, key), ...problem });
  }
}

/**
 * The options a constructor runs with: the table's defaults overlaid with the given ones, every bad
 * value reported at once in a `ConfigError` (code `invalid-parameter`) named after `owner`.
 */
export function resolveOptions<T extends OptionTable>(
  owner: string,
  table: T,
  given: Readonly<Record<string, unknown>> = {},
  others: readonly string[] = ['kind'],
): OptionsOf<T> {
  const issues: ConfigIssue[] = [];
  checkOptions(table, given, '', issues, others);
  if (issues.length > 0) throw new ConfigError(owner, issues, 'invalid-parameter');
  const out: Record<string, unknown> = { ...defaultsOf(table) };
  for (const key of Object.keys(table)) if (given[key] !== undefined) out[key] = given[key];
  return out as OptionsOf<T>;
}

/** A rule between two options failed (say, a warning level that must lie below the drift level). */
export function optionConflict(owner: string, path: string, message: string): never {
  throw new ConfigError(owner, [{ path, code: 'conflict', message }], 'invalid-parameter');
}

/** The rule that one option lies above another (a warning level above a drift level, say). */
export function requireAbove<T extends Readonly<Record<string, unknown>>>(
  owner: string,
  options: T,
  upper: keyof T & string,
  lower: keyof T & string,
): void {
  if (!((options[upper] as number) > (options[lower] as number))) {
    optionConflict(owner, upper, `must be larger than ${lower} (${options[lower]}), got ${options[upper]}`);
  }
}
