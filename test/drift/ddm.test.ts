import { describe, expect, it } from 'vitest';
import { Ddm } from '../../src/drift/index.js';

describe('DDM (Gama, Medas, Castillo & Rodrigues, SBIA 2004)', () => {
  it('has the thresholds of PUBLISHED.md at p_min = 0.2, n = 100', () => {
    // 20 errors first, then 80 correct: pᵢ + sᵢ only falls after the 30th value, so the minimum is at
    // i = 100 with p_min = 0.2 and s_min = √(0.2 · 0.8 / 100) = 0.04.
    // PUBLISHED.md, DDM [derived]: warning 0.2 + 2 · 0.04 = 0.28, drift 0.2 + 3 · 0.04 = 0.32.
    const ddm = new Ddm();
    for (let i = 0; i < 100; i++) expect(ddm.update(i < 20 ? 1 : 0)).toBe('stable');
    expect(ddm.estimate).toBe(0.2);
    expect(ddm.warningThreshold).toBeCloseTo(0.28, 12);
    expect(ddm.driftThreshold).toBeCloseTo(0.32, 12);
  });

  it('warns at p + s ≥ p_min + 2 s_min and drifts at ≥ p_min + 3 s_min, then restarts', () => {
    const ddm = new Ddm();
    for (let i = 0; i < 100; i++) ddm.update(i < 20 ? 1 : 0);
    // From the definition: after j more errors, p = (20 + j)/(100 + j), s = √(p(1 − p)/(100 + j)).
    const ps = (j: number) => {
      const p = (20 + j) / (100 + j);
      return p + Math.sqrt((p * (1 - p)) / (100 + j));
    };
    for (let j = 1; ; j++) {
      const expected = ps(j) >= 0.32 ? 'drift' : ps(j) >= 0.28 ? 'warning' : 'stable';
      expect(ddm.update(1)).toBe(expected);
      if (expected === 'drift') break;
    }
    expect(ddm.count).toBe(0);
    expect(ddm.driftThreshold).toBe(Number.POSITIVE_INFINITY);
  });

  it('judges nothing before 30 values', () => {
    const ddm = new Ddm();
    for (let i = 0; i < 29; i++) expect(ddm.update(i % 2)).toBe('stable');
    expect(ddm.driftThreshold).toBe(Number.POSITIVE_INFINITY);
    ddm.update(1);
    expect(Number.isFinite(ddm.driftThreshold)).toBe(true);
  });
});
