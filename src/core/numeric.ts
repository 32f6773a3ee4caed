/** Small numeric helpers used across learners, detectors and evaluation. */

export const LN2 = Math.LN2;
const HALF_LOG_2PI = 0.5 * Math.log(2 * Math.PI);

/**
 * The Hoeffding bound ε = √(R² ln(1/δ) / 2n): with probability 1 − δ the true mean of a variable
 * with range R lies within ε of the mean of n independent observations.
 * Domingos & Hulten, "Mining high-speed data streams", KDD 2000, eq. (1).
 */
export function hoeffdingBound(range: number, delta: number, n: number): number {
  return Math.sqrt((range * range * Math.log(1 / delta)) / (2 * n));
}

/** The n at which the Hoeffding bound falls to `epsilon`: R² ln(1/δ) / 2ε² (the bound solved for n). */
export function hoeffdingCount(range: number, delta: number, epsilon: number): number {
  return (range * range * Math.log(1 / delta)) / (2 * epsilon * epsilon);
}

/** Index of the largest of `length` values starting at `offset` (the first on ties). */
export function argmax(values: ArrayLike<number>, offset: number, length: number): number {
  let best = 0;
  let bestValue = values[offset]!;
  for (let i = 1; i < length; i++) {
    const v = values[offset + i]!;
    if (v > bestValue) {
      bestValue = v;
      best = i;
    }
  }
  return best;
}

/**
 * Scale `length` values at `offset` so they sum to 1; if they sum to 0 (or are not finite),
 * write the uniform distribution instead. Returns the original sum.
 */
export function normalizeInPlace(values: Float64Array, offset: number, length: number): number {
  let sum = 0;
  for (let i = 0; i < length; i++) sum += values[offset + i]!;
  if (sum > 0 && Number.isFinite(sum)) {
    const inv = 1 / sum;
    for (let i = 0; i < length; i++) values[offset + i]! *= inv;
  } else {
    const u = length > 0 ? 1 / length : 0;
    for (let i = 0; i < length; i++) values[offset + i] = u;
  }
  return sum;
}

/**
 * Turn `length` log-scores at `offset` into probabilities in place (a numerically stable softmax:
 * subtract the maximum before exponentiating).
 */
export function softmaxInPlace(values: Float64Array, offset: number, length: number): void {
  let max = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < length; i++) {
    const v = values[offset + i]!;
    if (v > max) max = v;
  }
  if (max === Number.NEGATIVE_INFINITY) {
    normalizeInPlace(values, offset, length);
    return;
  }
  let sum = 0;
  for (let i = 0; i < length; i++) {
    const e = Math.exp(values[offset + i]! - max);
    values[offset + i] = e;
    sum += e;
  }
  const inv = 1 / sum;
  for (let i = 0; i < length; i++) values[offset + i]! *= inv;
}

/** The logistic function 1 / (1 + e^−z), safe for large |z|. */
export function sigmoid(z: number): number {
  if (z >= 0) return 1 / (1 + Math.exp(-z));
  const e = Math.exp(z);
  return e / (1 + e);
}

/** Natural log of the normal density N(x; mean, variance). */
export function normalLogPdf(x: number, mean: number, variance: number): number {
  const d = x - mean;
  return -HALF_LOG_2PI - 0.5 * Math.log(variance) - (d * d) / (2 * variance);
}

/** The normal cumulative distribution function Φ((x − mean)/sd), via erfc. */
export function normalCdf(x: number, mean: number, sd: number): number {
  return 0.5 * erfc(-(x - mean) / (sd * Math.SQRT2));
}

/**
 * The complementary error function, with absolute error below 1.5e-7 everywhere (Abramowitz & Stegun,
 * Handbook of Mathematical Functions, 7.1.26): erfc(z) = (a₁t + a₂t² + a₃t³ + a₄t⁴ + a₅t⁵)·e^(−z²) with
 * t = 1/(1 + pz) for z ≥ 0, and erfc(−z) = 2 − erfc(z). The exponential does not depend on the
 * polynomial, so the two are computed side by side; the split search of the Hoeffding tree calls this
 * for every class at every candidate threshold.
 */
export function erfc(x: number): number {
  const z = Math.abs(x);
  const e = Math.exp(-z * z);
  const t = 1 / (1 + 0.3275911 * z);
  const poly =
    t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429))));
  const r = poly * e;
  return x >= 0 ? r : 2 - r;
}

/** Entropy in bits of `length` non-negative counts at `offset` (0 when they sum to 0). */
export function entropyBits(counts: ArrayLike<number>, offset: number, length: number): number {
  let total = 0;
  for (let i = 0; i < length; i++) total += counts[offset + i]!;
  if (total <= 0) return 0;
  let h = 0;
  for (let i = 0; i < length; i++) {
    const c = counts[offset + i]!;
    if (c > 0) {
      const p = c / total;
      h -= p * Math.log2(p);
    }
  }
  return h;
}

/** Gini impurity 1 − Σ p² of `length` non-negative counts at `offset` (0 when they sum to 0). */
export function gini(counts: ArrayLike<number>, offset: number, length: number): number {
  let total = 0;
  for (let i = 0; i < length; i++) total += counts[offset + i]!;
  if (total <= 0) return 0;
  let s = 0;
  for (let i = 0; i < length; i++) {
    const p = counts[offset + i]! / total;
    s += p * p;
  }
  return 1 - s;
}

/**
 * ln Γ(x) for x > 0: the Stirling series for x ≥ 10 and the recurrence Γ(x+1) = xΓ(x) below it
 * (Abramowitz & Stegun 6.1.40); absolute error below 1e-14 for the arguments Shoal uses.
 */
export function logGamma(x: number): number {
  let shift = 0;
  while (x < 10) {
    shift += Math.log(x);
    x += 1;
  }
  const inv = 1 / x;
  const inv2 = inv * inv;
  const series = inv * (1 / 12 - inv2 * (1 / 360 - inv2 * (1 / 1260 - inv2 * (1 / 1680))));
  return (x - 0.5) * Math.log(x) - x + HALF_LOG_2PI + series - shift;
}
