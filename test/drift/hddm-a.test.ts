import { describe, expect, it } from 'vitest';
import { type DriftLevel, HddmA } from '../../src/drift/index.js';
import { abrupt, errorStream } from '../support/drift-streams.js';

describe('HDDM_A (Frías-Blanco et al., IEEE TKDE 27(3), 2015)', () => {
  it('answers the Hoeffding test on averages as defined, step by step', () => {
    // The A-test written out (confidences α_D = 0.001 and α_W = 0.005, the paper's defaults, from
    // memory): the cut moves to n when Z̄ₙ + ε(n) ≤ X̄_cut + ε(n_cut), ε(k) = √(ln(1/α_D)/2k); otherwise
    // drift when Z̄ₙ − X̄_cut ≥ √((n − n_cut)/(2 n n_cut) · ln(1/α_D)), warning likewise with α_W.
    const values = errorStream(17, 20_000, 0.2, 0.35, abrupt(8000));
    const hddm = new HddmA();
    const eps = (k: number) => Math.sqrt(Math.log(1000) / (2 * k));
    const seen = new Set<DriftLevel>();
    let mismatches = 0;
    for (let t = 0; t < values.length; t++) {
      const n = hddm.count + 1;
      const total = hddm.estimate * hddm.count + values[t]!;
      const mean = total / n;
      const { cutCount, cutMean } = hddm;
      let want: DriftLevel = 'stable';
      if (cutCount > 0 && mean + eps(n) > cutMean + eps(cutCount)) {
        const spread = (n - cutCount) / (2 * n * cutCount);
        if (mean - cutMean >= Math.sqrt(spread * Math.log(1000))) want = 'drift';
        else if (mean - cutMean >= Math.sqrt(spread * Math.log(200))) want = 'warning';
      }
      const level = hddm.update(values[t]!);
      if (level !== want) mismatches++;
      seen.add(level);
    }
    expect(mismatches).toBe(0);
    expect(seen.has('warning') && seen.has('drift')).toBe(true);
  });
});
