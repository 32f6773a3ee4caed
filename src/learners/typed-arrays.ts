import { decodeF64, decodeI32, ShoalError } from '../core/index.js';

/**
 * Typed-array helpers for learner state: growing a table when a new class appears (the only time a
 * learner allocates after construction) and reading a snapshot's arrays back with their lengths checked.
 */

/** A copy of `values` lengthened to `length`, the new tail zeroed (or set to `fill`). */
export function growF64(values: Float64Array, length: number, fill = 0): Float64Array {
  const out = new Float64Array(length);
  out.set(values);
  if (fill !== 0) out.fill(fill, values.length);
  return out;
}

/**
 * The room a table grown by doubling holds once it holds `count` entries: `first`, doubled until it is
 * at least `count`, never above `limit`. A table grown this way alone can be restored to the room it had,
 * so a learner whose size counts its tables' room reports the same size after a restore.
 */
export function doubledRoom(first: number, count: number, limit = Number.POSITIVE_INFINITY): number {
  let room = Math.min(limit, first);
  while (room < count) room = Math.min(limit, 2 * room);
  return room;
}

/** Decode a base64 array of doubles from a snapshot and check it holds exactly `length` values. */
export function decodeF64Exact(text: unknown, length: number, what: string): Float64Array {
  const values = decodeF64(text as string, what);
  if (values.length !== length) {
    throw new ShoalError('invalid-snapshot', `${what}: expected ${length} values, got ${values.length}`);
  }
  return values;
}

/** Decode a base64 array of int32s from a snapshot and check it holds exactly `length` values. */
export function decodeI32Exact(text: unknown, length: number, what: string): Int32Array {
  const values = decodeI32(text as string, what);
  if (values.length !== length) {
    throw new ShoalError('invalid-snapshot', `${what}: expected ${length} values, got ${values.length}`);
  }
  return values;
}

/** Read a finite number ≥ `min` from a snapshot's state. */
export function snapshotNumber(value: unknown, what: string, min = 0): number {
  if (typeof value !== 'number' || !Number.isFinite(value) || value < min) {
    throw new ShoalError(
      'invalid-snapshot',
      `${what}: expected a finite number ≥ ${min}, got ${String(value)}`,
    );
  }
  return value;
}
