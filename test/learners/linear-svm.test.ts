import { describe, expect, it } from 'vitest';
import { nominal } from '../../src/core/index.js';
import type { LearnerSnapshot } from '../../src/learners/learner.js';
import { LinearSvm } from '../../src/learners/linear-svm.js';
import { led, sea, stagger } from '../../src/streams/index.js';
import { describeLearnerContract } from '../support/learner-contract.js';
import { note } from '../support/note.js';
import { ceiling, holdout } from './accuracy.js';

describeLearnerContract({
  name: 'linear-svm',
  make: (gen, seed) => new LinearSvm(gen.schema, {}, seed),
  restore: (s: LearnerSnapshot) => LinearSvm.restore(s),
});

describeLearnerContract({
  name: 'linear-svm (no projection, small λ)',
  make: (gen, seed) => new LinearSvm(gen.schema, { lambda: 1e-4, project: false }, seed),
  restore: (s: LearnerSnapshot) => LinearSvm.restore(s),
});

describe('linear-svm on published streams', () => {
  it('SEA θ = 8, 10% noise: holdout accuracy ≥ 0.87 and under the 90% Bayes bound', () => {
    // Street & Kim 2001: the concept is the half-plane f1 + f2 ≤ 8, so a linear SVM can reach the Bayes
    // rule; with 10% flipped labels no classifier exceeds 0.90 beyond sampling error (PUBLISHED.md, derived).
    const accuracy = holdout(
      new LinearSvm(sea().schema),
      sea({ threshold: 8, noise: 0.1 }, 51),
      20_000,
      10_000,
    );
    note(`SEA: linear-svm holdout accuracy ${accuracy.toFixed(4)}`);
    expect(accuracy).toBeGreaterThanOrEqual(0.87);
    expect(accuracy).toBeLessThanOrEqual(ceiling(0.9, 10_000));
  });

  it.each(['a', 'b'] as const)('STAGGER concept %s, noise-free: 100%% on held-out rows', (concept) => {
    // Schlimmer & Granger 1986 (PUBLISHED.md): noise-free, and linearly separable in the one-hot encoding.
    const accuracy = holdout(new LinearSvm(stagger().schema), stagger({ concept }, 52), 3000, 2000);
    expect(accuracy).toBe(1);
  });

  it('LED, 10% noise: ten one-vs-rest machines reach 0.70 and stay under the 74% Bayes rate', () => {
    // Breiman et al. 1984 (PUBLISHED.md [seen], 0.740022 derived).
    const accuracy = holdout(new LinearSvm(led().schema), led({ noise: 0.1 }, 53), 20_000, 10_000);
    note(`LED: linear-svm holdout accuracy ${accuracy.toFixed(4)}`);
    expect(accuracy).toBeGreaterThanOrEqual(0.7);
    expect(accuracy).toBeLessThanOrEqual(ceiling(0.740022, 10_000));
  });
});

describe('linear-svm against the Pegasos update', () => {
  it('takes the first Pegasos step and projection by hand', () => {
    // Shalev-Shwartz, Singer & Srebro 2007, Fig. 1 with k = 1, λ = 0.5: at t = 1, η = 1/(λt) = 2 and the
    // shrink (1 − ηλ) is 0; both one-vs-rest margins are 0 < 1, so w_0 = 2x and w_1 = −2x, with x the
    // one-hot input plus the constant (‖x‖ = √2). ‖w‖ = 2√2 exceeds 1/√λ = √2, so each is scaled to
    // norm √2: w_0 = x, w_1 = −x, margins (2, −2), and P(0) = σ(2) / (σ(2) + σ(−2)) = σ(2).
    const svm = new LinearSvm({ features: [nominal('v', ['a', 'b'])] }, { lambda: 0.5 });
    svm.ensureClasses(2);
    const row = new Float64Array([1]);
    const out = new Float64Array(2);
    svm.train(row, 0, 0, 1);
    expect(svm.score(row, 0, out, 0)).toBe(0);
    expect(out[0]).toBeCloseTo(1 / (1 + Math.exp(-2)), 15);
  });

  it('leaves a row outside the margin band alone except for the shrink', () => {
    // After the step above, the same row has margin y·(w·x) = 2 ≥ 1 for both machines, so the second step
    // only shrinks: w ← (1 − 1/2) w, margins (1, −1), P(0) = σ(1).
    const svm = new LinearSvm({ features: [nominal('v', ['a', 'b'])] }, { lambda: 0.5 });
    svm.ensureClasses(2);
    const row = new Float64Array([1]);
    const out = new Float64Array(2);
    svm.train(row, 0, 0, 1);
    svm.train(row, 0, 0, 1);
    svm.score(row, 0, out, 0);
    expect(out[0]).toBeCloseTo(1 / (1 + Math.exp(-1)), 15);
  });

  it('refuses bad options by name', () => {
    const schema = { features: [nominal('v', ['a'])] };
    expect(() => new LinearSvm(schema, { lambda: 0 })).toThrow(/lambda/);
    expect(() => new LinearSvm(schema, { project: 'yes' as unknown as boolean })).toThrow(/project/);
  });
});
