import { ShoalError } from './errors.js';

/**
 * JSON-safe encodings for typed arrays in snapshots. Numbers go through base64 of their IEEE-754
 * bytes so that NaN, ±Infinity and every bit of every double survive a round trip exactly
 * (JSON itself turns NaN into null). Byte order is the platform's, little-endian on every platform
 * Node supports.
 */

export function encodeF64(values: Float64Array): string {
  return encodeBytes(values);
}

export function decodeF64(text: string, what = 'array'): Float64Array<ArrayBuffer> {
  return new Float64Array(decodeBytes(text, what, 8, 'doubles'));
}

/** Single-precision values (the Hoeffding tree's leaf statistics), four bytes each. */
export function encodeF32(values: Float32Array): string {
  return encodeBytes(values);
}

export function decodeF32(text: string, what = 'array'): Float32Array<ArrayBuffer> {
  return new Float32Array(decodeBytes(text, what, 4, 'floats'));
}

export function encodeI32(values: Int32Array): string {
  return encodeBytes(values);
}

export function decodeI32(text: string, what = 'array'): Int32Array<ArrayBuffer> {
  return new Int32Array(decodeBytes(text, what, 4, 'int32s'));
}

function encodeBytes(values: Float64Array | Float32Array | Int32Array): string {
  return Buffer.from(values.buffer, values.byteOffset, values.byteLength).toString('base64');
}

/** The bytes of base64 `text` in a fresh, aligned buffer: a whole number of `size`-byte `units`. */
function decodeBytes(text: string, what: string, size: number, units: string): ArrayBuffer {
  if (typeof text !== 'string') throw new ShoalError('invalid-snapshot', `${what}: expected base64 text`);
  const bytes = Buffer.from(text, 'base64');
  if (bytes.byteLength % size !== 0) {
    throw new ShoalError(
      'invalid-snapshot',
      `${what}: ${bytes.byteLength} bytes is not a whole number of ${units}`,
    );
  }
  const out = new ArrayBuffer(bytes.byteLength);
  new Uint8Array(out).set(bytes);
  return out;
}
