import { logGamma } from './numeric.js';
import { nonNegative } from './params.js';
import type { Rng } from './random.js';

/**
 * Exact Poisson sampling for any λ ≥ 0, the weight of online bagging (Oza & Russell, "Online bagging
 * and boosting", AISTATS 2001: each member trains on each example k ~ Poisson(λ) times).
 *
 * - λ < 10: inversion by sequential search over a cumulative table built once per sampler; one uniform
 *   per draw, which is what the hot path of an ensemble needs for λ = 1 and λ = 6.
 * - λ ≥ 10: Hörmann's transformed rejection with squeeze, PTRS ("The transformed rejection method for
 *   generating Poisson random variables", Insurance: Mathematics and Economics 12, 1993), exact and
 *   O(1) expected time for large λ.
 *
 * @example
 * const draw = new PoissonSampler(1);
 * const k = draw.sample(rng); // P(k = 0) = e^-1
 */
export class PoissonSampler {
  readonly lambda: number;
  private readonly cdf: Float64Array;
  private readonly tableMode: boolean;
  // PTRS constants
  private readonly b: number;
  private readonly a: number;
  private readonly logInvAlpha: number;
  private readonly vr: number;
  private readonly logLambda: number;

  constructor(lambda: number) {
    this.lambda = nonNegative('poisson', 'lambda', lambda);
    this.tableMode = lambda < 10;
    if (this.tableMode) {
      const cdf: number[] = [];
      let p = Math.exp(-lambda);
      let c = p;
      cdf.push(c);
      for (let k = 1; c < 1 && p > 0 && k < 200; k++) {
        p *= lambda / k;
        c += p;
        cdf.push(c);
      }
      cdf[cdf.length - 1] = 1;
      this.cdf = Float64Array.from(cdf);
    } else {
      this.cdf = new Float64Array(0);
    }
    const smu = Math.sqrt(lambda);
    this.b = 0.931 + 2.53 * smu;
    this.a = -0.059 + 0.02483 * this.b;
    this.logInvAlpha = Math.log(1.1239 + 1.1328 / (this.b - 3.4));
    this.vr = 0.9277 - 3.6224 / (this.b - 2);
    this.logLambda = Math.log(lambda);
  }

  /** One draw k ~ Poisson(λ). */
  sample(rng: Rng): number {
    if (this.tableMode) {
      const u = rng.next();
      const cdf = this.cdf;
      let k = 0;
      while (u >= cdf[k]!) k++;
      return k;
    }
    return this.transformedRejection(rng);
  }

  private transformedRejection(rng: Rng): number {
    const { a, b, vr, lambda } = this;
    for (;;) {
      const u = rng.next() - 0.5;
      const v = rng.next();
      const us = 0.5 - Math.abs(u);
      const k = Math.floor(((2 * a) / us + b) * u + lambda + 0.43);
      if (us >= 0.07 && v <= vr) return k;
      if (k < 0 || (us < 0.013 && v > us)) continue;
      const lhs = Math.log(v) + this.logInvAlpha - Math.log(a / (us * us) + b);
      const rhs = -lambda + k * this.logLambda - logGamma(k + 1);
      if (lhs <= rhs) return k;
    }
  }
}
