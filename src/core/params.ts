import { ShoalError } from './errors.js';

/**
 * Parameter checks shared by every learner and detector. Each throws a `ShoalError` with code
 * `invalid-parameter` whose message names the owner, the parameter, what was expected and what arrived.
 */

function fail(owner: string, name: string, expected: string, value: unknown): never {
  throw new ShoalError('invalid-parameter', `${owner}: ${name} must be ${expected}, got ${String(value)}`);
}

/** A finite number strictly between 0 and 1 (a confidence δ, a rate). */
export function openUnit(owner: string, name: string, value: number): number {
  if (!(value > 0 && value < 1)) fail(owner, name, 'in (0, 1)', value);
  return value;
}

/** A finite number in [0, 1]. */
export function closedUnit(owner: string, name: string, value: number): number {
  if (!(value >= 0 && value <= 1)) fail(owner, name, 'in [0, 1]', value);
  return value;
}

/** A finite number ≥ 0. */
export function nonNegative(owner: string, name: string, value: number): number {
  if (!(value >= 0 && Number.isFinite(value))) fail(owner, name, 'a finite number ≥ 0', value);
  return value;
}

/** A finite number > 0. */
export function positive(owner: string, name: string, value: number): number {
  if (!(value > 0 && Number.isFinite(value))) fail(owner, name, 'a finite number > 0', value);
  return value;
}

/** An integer ≥ `min` (default 1). */
export function integerAtLeast(owner: string, name: string, value: number, min = 1): number {
  if (!(Number.isInteger(value) && value >= min)) fail(owner, name, `an integer ≥ ${min}`, value);
  return value;
}

/** A non-empty list (of learner specs, say). */
export function nonEmptyList<T>(owner: string, name: string, value: readonly T[]): readonly T[] {
  if (!Array.isArray(value) || value.length === 0)
    fail(owner, name, 'a non-empty list', Array.isArray(value) ? '[]' : value);
  return value;
}

/** A spec without its `kind`: the options a learner or detector constructor takes. */
export function optionsOf<T extends { readonly kind: string }>(spec: T): Omit<T, 'kind'> {
  const { kind: _kind, ...options } = spec;
  return options;
}

/** One of a fixed set of string choices. */
export function oneOf<T extends string>(
  owner: string,
  name: string,
  value: string,
  choices: readonly T[],
): T {
  if (!(choices as readonly string[]).includes(value))
    fail(owner, name, `one of ${choices.join(', ')}`, value);
  return value as T;
}
