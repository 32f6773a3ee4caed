import { Rng, type Seed } from '../../src/core/index.js';

/**
 * The benchmark stream of the learner section: 10 numeric features uniform on [0, 10]; the label follows
 * the SEA rule on the first two (Street & Kim, KDD 2001: class 1 iff f1 + f2 ≤ 8), with 10% of labels
 * flipped, so the best possible accuracy is 90% and the other eight features are noise a learner must
 * ignore. Seeded, so every run and every learner sees the same rows.
 *
 * @example
 * const { rows, labels, width } = benchStream(200_000, 'bench-learners');
 */
export function benchStream(
  count: number,
  seed: Seed,
): { rows: Float64Array; labels: Int32Array; width: number } {
  const width = 10;
  const rng = new Rng(seed);
  const rows = new Float64Array(count * width);
  const labels = new Int32Array(count);
  for (let i = 0; i < count; i++) {
    const at = i * width;
    for (let j = 0; j < width; j++) rows[at + j] = 10 * rng.next();
    const label = rows[at]! + rows[at + 1]! <= 8 ? 1 : 0;
    labels[i] = rng.next() < 0.1 ? 1 - label : label;
  }
  return { rows, labels, width };
}
