import { type ConfiguredSnapshot, ShoalError } from '../core/index.js';

/**
 * The checkpoint form of every evaluator: JSON-safe and exact. Counts and sums that must survive bit
 * for bit travel as base64 of their IEEE-754 bytes (see `encodeF64`); finite scalars travel as JSON
 * numbers, which round-trip every finite double exactly.
 */
export type EvaluatorSnapshot = ConfiguredSnapshot;

/** Throw `invalid-snapshot` unless `value` is a non-null object. */
export function expectObject(value: unknown, what: string): asserts value is object {
  if (typeof value !== 'object' || value === null) {
    throw new ShoalError('invalid-snapshot', `${what}: expected an object, got ${String(value)}`);
  }
}

/** Read a finite number field of a snapshot part, or throw naming the field. */
export function readFinite(part: unknown, key: string, what: string): number {
  expectObject(part, what);
  const value = (part as Record<string, unknown>)[key];
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new ShoalError('invalid-snapshot', `${what}: ${key} must be a finite number, got ${String(value)}`);
  }
  return value;
}

/** Read an integer field ≥ `min` (default 0) of a snapshot part, or throw naming the field. */
export function readInteger(part: unknown, key: string, what: string, min = 0): number {
  const value = readFinite(part, key, what);
  if (!(Number.isInteger(value) && value >= min)) {
    throw new ShoalError('invalid-snapshot', `${what}: ${key} must be an integer ≥ ${min}, got ${value}`);
  }
  return value;
}
