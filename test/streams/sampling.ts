import { expect } from 'vitest';
import type { StreamGenerator } from '../../src/streams/index.js';
import { note } from '../support/note.js';

/** Share of rows labelled `label` (default 1) among the next `n` rows of `generator`. */
export function labelShare(generator: StreamGenerator, n: number, label = 1): number {
  const row = new Float64Array(generator.schema.features.length);
  let hits = 0;
  for (let i = 0; i < n; i++) if (generator.next(row, 0) === label) hits++;
  return hits / n;
}

/**
 * Assert that a share measured on `n` independent rows is within `k` standard errors
 * √(p(1 − p)/n) of the expected probability `p`, and print both.
 */
export function expectShare(what: string, observed: number, p: number, n: number, k = 5): void {
  const se = Math.sqrt((p * (1 - p)) / n);
  note(
    `${what}: ${observed.toFixed(5)} (expected ${p.toFixed(6)}, ${k} SE = ${(k * se).toFixed(5)}, n = ${n})`,
  );
  expect(Math.abs(observed - p)).toBeLessThanOrEqual(k * se);
}
