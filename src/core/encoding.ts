import { ShoalError } from './errors.js';

/**
 * JSON-safe encodings for typed arrays in snapshots. Numbers go through base64 of their IEEE-754
 * bytes so that NaN, ±Infinity and every bit of every double survive a round trip exactly
 * (JSON itself turns NaN into null). Byte order is the platform's, little-endian on every platform
 * Node supports.
 */

export function encodeF64(values: Float64Array): string {
  return Buffer.from(values.buffer, values.byteOffset, values.byteLength).toString('base64');
}

export function decodeF64(text: string, what = 'array'): Float64Array<ArrayBuffer> {
  if (typeof text !== 'string') throw new ShoalError('invalid-snapshot', `${what}: expected base64 text`);
  const bytes = Buffer.from(text, 'base64');
  if (bytes.byteLength % 8 !== 0) {
    throw new ShoalError(
      'invalid-snapshot',
      `${what}: ${bytes.byteLength} bytes is not a whole number of doubles`,
    );
  }
  const out = new Float64Array(bytes.byteLength / 8);
  new Uint8Array(out.buffer).set(bytes);
  return out;
}

export function encodeI32(values: Int32Array): string {
  return Buffer.from(values.buffer, values.byteOffset, values.byteLength).toString('base64');
}

export function decodeI32(text: string, what = 'array'): Int32Array<ArrayBuffer> {
  if (typeof text !== 'string') throw new ShoalError('invalid-snapshot', `${what}: expected base64 text`);
  const bytes = Buffer.from(text, 'base64');
  if (bytes.byteLength % 4 !== 0) {
    throw new ShoalError(
      'invalid-snapshot',
      `${what}: ${bytes.byteLength} bytes is not a whole number of int32s`,
    );
  }
  const out = new Int32Array(bytes.byteLength / 4);
  new Uint8Array(out.buffer).set(bytes);
  return out;
}
