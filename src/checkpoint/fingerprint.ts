import { createHash } from 'node:crypto';

/**
 * The fingerprint of a resolved configuration: SHA-256 (FIPS 180-4) of its canonical JSON — keys in
 * sorted order at every depth, no whitespace — in hex. Two configurations that resolve to the same
 * values have the same fingerprint however their files were written; a checkpoint carries it so that a
 * run is never resumed under different settings.
 *
 * @example
 * configFingerprint({ seed: 7, ensemble: { kind: 'bagging' } }) === configFingerprint({ ensemble: { kind: 'bagging' }, seed: 7 });
 */
export function configFingerprint(config: unknown): string {
  return createHash('sha256').update(canonicalJson(config)).digest('hex');
}

/** JSON with object keys sorted at every depth; `undefined` members are left out, as JSON does. */
export function canonicalJson(value: unknown): string {
  if (value === null || typeof value !== 'object') return JSON.stringify(value) ?? 'null';
  if (Array.isArray(value))
    return `[${value.map((v) => (v === undefined ? 'null' : canonicalJson(v))).join(',')}]`;
  const entries = Object.keys(value)
    .sort()
    .filter((k) => (value as Record<string, unknown>)[k] !== undefined)
    .map((k) => `${JSON.stringify(k)}:${canonicalJson((value as Record<string, unknown>)[k])}`);
  return `{${entries.join(',')}}`;
}
