import { describe, expect, it } from 'vitest';
import type { DriftLevel } from '../../src/drift/index.js';
import { Eddm } from '../../src/drift/index.js';

/**
 * EDDM's rule written out from its definition (Baena-García et al. 2006; thresholds α = 0.95, β = 0.90
 * and 30 errors from memory): at each error, from the 30th on, score = p′ + 2s′ over all distances
 * between errors (two-pass mean and population deviation), the maximum score so far, and the ratio.
 */
function oracle(distances: readonly number[], max: number): { level: DriftLevel; max: number } {
  if (distances.length < 30) return { level: 'stable', max };
  const mean = distances.reduce((a, b) => a + b, 0) / distances.length;
  const sd = Math.sqrt(distances.reduce((a, b) => a + (b - mean) ** 2, 0) / distances.length);
  const score = mean + 2 * sd;
  const top = Math.max(max, score);
  const ratio = score / top;
  return { level: ratio < 0.9 ? 'drift' : ratio < 0.95 ? 'warning' : 'stable', max: top };
}

describe('EDDM (Baena-García et al., 2006)', () => {
  it('judges the distance between errors against its running maximum, as defined', () => {
    // Errors every 10 values for 40 errors, then every 3 values: errors come closer together.
    const eddm = new Eddm();
    const distances: number[] = [];
    let max = 0;
    let previous: DriftLevel = 'stable';
    const seen = new Set<DriftLevel>();
    for (let e = 0; e < 200 && previous !== 'drift'; e++) {
      const gap = e < 40 ? 10 : 3;
      // Between errors the level holds.
      for (let k = 1; k < gap; k++) expect(eddm.update(0)).toBe(previous);
      distances.push(gap);
      const want = oracle(distances, max);
      max = want.max;
      previous = eddm.update(1);
      expect(previous).toBe(want.level);
      seen.add(previous);
    }
    expect([...seen].sort()).toEqual(['drift', 'stable', 'warning']);
    // After the drift it has started again.
    expect(eddm.count).toBe(0);
    expect(eddm.estimate).toBe(0);
  });
});
