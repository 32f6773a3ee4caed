import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { nominal, numeric } from '../../src/core/index.js';
import { FeatureScaler } from '../../src/learners/feature-scaler.js';

describe('FeatureScaler', () => {
  it('keeps the two-pass weighted mean and 1/sd of each numeric feature, skipping missing values', () => {
    // Definition: weighted mean Σwx/Σw and population variance Σw(x − mean)²/Σw over the values present.
    const schema = { features: [numeric('x'), nominal('v', 3), numeric('y')] };
    fc.assert(
      fc.property(
        fc.array(
          fc.tuple(
            fc.oneof(fc.double({ min: -1e3, max: 1e3, noNaN: true }), fc.constant(Number.NaN)),
            fc.double({ min: -1e3, max: 1e3, noNaN: true }),
            fc.double({ min: 0.01, max: 5, noNaN: true }),
          ),
          { minLength: 2, maxLength: 100 },
        ),
        (rows) => {
          const scaler = new FeatureScaler(schema);
          for (const [x, y, w] of rows) scaler.observe(new Float64Array([x, 1, y]), 0, w);
          const check = (j: number, values: [number, number][]) => {
            if (values.length === 0) return scaler.invSd[j] === 1 && scaler.mean(j) === 0;
            const total = values.reduce((s, [, w]) => s + w, 0);
            const mean = values.reduce((s, [v, w]) => s + v * w, 0) / total;
            const variance = values.reduce((s, [v, w]) => s + w * (v - mean) ** 2, 0) / total;
            const meanOk = Math.abs(scaler.mean(j) - mean) <= 1e-9 * Math.max(1, Math.abs(mean));
            if (variance < 1e-12) return meanOk;
            const sd = 1 / scaler.invSd[j]!;
            return meanOk && Math.abs(sd - Math.sqrt(variance)) <= 1e-6 * Math.max(1, Math.sqrt(variance));
          };
          return (
            check(
              0,
              rows.filter(([x]) => !Number.isNaN(x)).map(([x, , w]) => [x, w]),
            ) &&
            check(
              1,
              rows.map(([, y, w]) => [y, w]),
            )
          );
        },
      ),
      { seed: 20261202, numRuns: 200 },
    );
  });

  it('restores its statistics exactly and refuses a state of the wrong length', () => {
    const schema = { features: [numeric('x')] };
    const scaler = new FeatureScaler(schema);
    scaler.observe(new Float64Array([3]), 0, 1);
    scaler.observe(new Float64Array([5]), 0, 2);
    const copy = new FeatureScaler(schema);
    copy.load(JSON.parse(JSON.stringify(scaler.state())));
    expect(copy.mean(0)).toBe(scaler.mean(0));
    expect(copy.invSd[0]).toBe(scaler.invSd[0]);
    expect(() => new FeatureScaler({ features: [numeric('a'), numeric('b')] }).load(scaler.state())).toThrow(
      /expected 6 values, got 3/,
    );
  });
});
