import { decodeF64, ShoalError } from '../core/index.js';
import type { GeneratorState } from './generator.js';

/**
 * Parameter and state checks shared by the generators. Parameters fail with `invalid-parameter`,
 * states with `invalid-snapshot`; every message names the generator and the field.
 */

/** A number in [min, max]. */
export function numberIn(owner: string, name: string, value: number, min: number, max: number): number {
  if (!(typeof value === 'number' && value >= min && value <= max)) {
    throw new ShoalError(
      'invalid-parameter',
      `${owner}: ${name} must be a number in [${min}, ${max}], got ${String(value)}`,
    );
  }
  return value;
}

/** An integer in [min, max]. */
export function integerIn(owner: string, name: string, value: number, min: number, max: number): number {
  if (!(Number.isInteger(value) && value >= min && value <= max)) {
    throw new ShoalError(
      'invalid-parameter',
      `${owner}: ${name} must be an integer in [${min}, ${max}], got ${String(value)}`,
    );
  }
  return value;
}

/** The generator-specific part of a state, checked to be an object. */
export function stateExtra(owner: string, state: GeneratorState): Readonly<Record<string, unknown>> {
  const extra = state?.extra;
  if (typeof extra !== 'object' || extra === null || Array.isArray(extra)) {
    throw new ShoalError('invalid-snapshot', `${owner} state: extra must be an object`);
  }
  return extra as Readonly<Record<string, unknown>>;
}

/** Decode the base64 array `field` of a state's extra part and check its length. */
export function stateArray(
  owner: string,
  extra: Readonly<Record<string, unknown>>,
  field: string,
  length: number,
): Float64Array {
  const values = decodeF64(extra[field] as string, `${owner} state: ${field}`);
  if (values.length !== length) {
    throw new ShoalError(
      'invalid-snapshot',
      `${owner} state: ${field} holds ${values.length} values, this generator needs ${length}`,
    );
  }
  return values;
}

/** An integer field of a state's extra part in [min, max]. */
export function stateInteger(
  owner: string,
  extra: Readonly<Record<string, unknown>>,
  field: string,
  min: number,
  max: number,
): number {
  const value = extra[field];
  if (!(typeof value === 'number' && Number.isInteger(value) && value >= min && value <= max)) {
    throw new ShoalError(
      'invalid-snapshot',
      `${owner} state: ${field} must be an integer in [${min}, ${max}], got ${String(value)}`,
    );
  }
  return value;
}
