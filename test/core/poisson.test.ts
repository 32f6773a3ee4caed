import quantile from '@stdlib/stats-base-dists-chisquare-quantile';
import poissonPmf from '@stdlib/stats-base-dists-poisson-pmf';
import { describe, expect, it } from 'vitest';
import { PoissonSampler, Rng, samplePoisson } from '../../src/core/index.js';
import { note } from '../support/note.js';

/**
 * Pearson's χ² goodness of fit of `n` draws against the Poisson(λ) pmf from @stdlib (the outside
 * reference). Cells with expected count < 5 are pooled into the tail (common practice, Cochran 1954).
 */
function chiSquare(
  lambda: number,
  n: number,
  seed: number,
  draw: (rng: Rng) => number,
): { stat: number; dof: number } {
  const rng = new Rng(seed);
  const counts = new Map<number, number>();
  for (let i = 0; i < n; i++) {
    const k = draw(rng);
    counts.set(k, (counts.get(k) ?? 0) + 1);
  }
  let stat = 0;
  let cells = 0;
  let k = 0;
  let cdf = 0;
  for (;;) {
    const p = poissonPmf(k, lambda);
    const expected = n * p;
    if (expected < 5 && k > lambda) break;
    if (expected >= 5) {
      const observed = counts.get(k) ?? 0;
      stat += (observed - expected) ** 2 / expected;
      cells++;
      cdf += p;
    }
    k++;
  }
  let observedTail = n;
  for (let j = 0; j < k; j++) {
    if (n * poissonPmf(j, lambda) >= 5) observedTail -= counts.get(j) ?? 0;
  }
  const expectedTail = n * (1 - cdf);
  stat += (observedTail - expectedTail) ** 2 / expectedTail;
  cells++;
  return { stat, dof: cells - 1 };
}

describe('PoissonSampler', () => {
  // Reference pmf: @stdlib/stats-base-dists-poisson-pmf; critical value: @stdlib chi-square quantile.
  // PUBLISHED.md: P(0) = P(1) = e^-1 under Poisson(1) (Oza & Russell 2001; Gama 2010, Eq. 10.1).
  for (const lambda of [1, 6, 30]) {
    it(`fits the Poisson(${lambda}) pmf (χ² test at the 0.1% level)`, () => {
      const sampler = new PoissonSampler(lambda);
      const { stat, dof } = chiSquare(lambda, 200_000, 11, (rng) => sampler.sample(rng));
      const critical = quantile(0.999, dof);
      note(`Poisson(${lambda}): χ² = ${stat.toFixed(2)} on ${dof} dof, critical ${critical.toFixed(2)}`);
      expect(stat).toBeLessThan(critical);
    });
  }

  for (const lambda of [0.7, 6, 30]) {
    it(`samplePoisson (λ changing per call) also fits the Poisson(${lambda}) pmf`, () => {
      const { stat, dof } = chiSquare(lambda, 200_000, 12, (rng) => samplePoisson(rng, lambda));
      expect(stat).toBeLessThan(quantile(0.999, dof));
    });
  }

  for (const lambda of [0.5, 1, 6, 12, 100]) {
    it(`has mean and variance ≈ λ = ${lambda}`, () => {
      const n = 200_000;
      const sampler = new PoissonSampler(lambda);
      const rng = new Rng(3);
      let sum = 0;
      let sumSq = 0;
      for (let i = 0; i < n; i++) {
        const k = sampler.sample(rng);
        sum += k;
        sumSq += k * k;
      }
      const mean = sum / n;
      const variance = sumSq / n - mean * mean;
      // Standard error of the mean is √(λ/n); of the variance ≈ λ√(2/n) for large λ (from memory).
      expect(Math.abs(mean - lambda)).toBeLessThan(5 * Math.sqrt(lambda / n));
      expect(Math.abs(variance - lambda)).toBeLessThan(5 * Math.sqrt((lambda + 2 * lambda * lambda) / n));
    });
  }

  it('draws by inversion the same k as a search of the cumulative pmf from k = 0, wherever its own search starts', () => {
    // Inversion (the least k with u < F(k)) fixes k for each uniform u; samplePoisson searches from 0.
    for (const lambda of [0.25, 1, 2.5, 6, 9.5]) {
      const sampler = new PoissonSampler(lambda);
      const a = new Rng(`inversion-${lambda}`);
      const b = new Rng(`inversion-${lambda}`);
      let differ = 0;
      for (let i = 0; i < 100_000; i++) if (sampler.sample(a) !== samplePoisson(b, lambda)) differ++;
      expect(differ).toBe(0);
    }
  });

  it('draws zero for λ = 0', () => {
    const sampler = new PoissonSampler(0);
    const rng = new Rng(1);
    for (let i = 0; i < 1000; i++) expect(sampler.sample(rng)).toBe(0);
  });

  it('refuses a negative or non-finite λ, naming the parameter', () => {
    expect(() => new PoissonSampler(-1)).toThrow(/lambda/);
    expect(() => new PoissonSampler(Number.NaN)).toThrow(/lambda/);
    expect(() => new PoissonSampler(Number.POSITIVE_INFINITY)).toThrow(/lambda/);
  });

  it('gives the same draws for the same seed and resumes from exported state', () => {
    for (const lambda of [1, 6, 50]) {
      const sampler = new PoissonSampler(lambda);
      const a = new Rng('seed');
      const b = new Rng('seed');
      for (let i = 0; i < 500; i++) expect(sampler.sample(a)).toBe(sampler.sample(b));
      const resumed = Rng.fromState(JSON.parse(JSON.stringify(a.state())));
      for (let i = 0; i < 500; i++) expect(sampler.sample(resumed)).toBe(sampler.sample(a));
    }
  });
});
