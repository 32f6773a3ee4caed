import { describe, expect, it } from 'vitest';
import type { FeatureSchema } from '../../src/core/index.js';
import type { LearnerSnapshot, Regressor } from '../../src/learners/learner.js';
import { expectShoalError } from './errors.js';
import { friedman1, mixedRegression, prequential, type RegressionBlock } from './regressor-streams.js';

/**
 * The contract suite every regressor passes (one suite, every implementation — see DEVELOPERS.md):
 * determinism under a seed, snapshot → JSON → restore with identical next predictions, weight 0 leaves
 * the model unchanged, bounded behaviour under extreme weights, and bad input refused with a
 * `ShoalError` that names the problem. Streams: Friedman #1 (Friedman, Annals of Statistics 1991) and
 * an invented stream with nominal and missing values (`regressor-streams.ts`).
 */
export interface RegressorCase {
  readonly name: string;
  /** Build a fresh regressor for the schema and seed. */
  make(schema: FeatureSchema, seed: number): Regressor;
  restore(snapshot: LearnerSnapshot): Regressor;
}

const WEIGHTS = [1, 2, 3, 0.5];

function sameBits(a: Float64Array, b: Float64Array): boolean {
  return Buffer.from(a.buffer, a.byteOffset, a.byteLength).equals(
    Buffer.from(b.buffer, b.byteOffset, b.byteLength),
  );
}

export function describeRegressorContract(c: RegressorCase): void {
  describe(`${c.name} keeps the regressor contract`, () => {
    const streams: readonly (readonly [string, (count: number, seed: number) => RegressionBlock])[] = [
      ['Friedman #1', friedman1],
      ['mixed nominal and missing', mixedRegression],
    ];
    it('treats a non-integer or out-of-range nominal code exactly as a missing value', () => {
      // Feature 2 of the mixed stream is nominal with codes 0 … 3; every 4th row gets a bad code (or NaN).
      const bad = [1.5, -1, 4, 2.0000001, 1e9, -0.5];
      const block = mixedRegression(2000, 21);
      const withBad = { ...block, rows: Float64Array.from(block.rows) };
      const withNaN = { ...block, rows: Float64Array.from(block.rows) };
      for (let i = 0; i < 2000; i += 4) {
        withBad.rows[i * block.width + 2] = bad[(i / 4) % bad.length]!;
        withNaN.rows[i * block.width + 2] = Number.NaN;
      }
      const a = c.make(block.schema, 9);
      const b = c.make(block.schema, 9);
      expect(sameBits(prequential(a, withBad), prequential(b, withNaN))).toBe(true);
      expect(JSON.stringify(a.snapshot())).toBe(JSON.stringify(b.snapshot()));
    });

    for (const [streamName, draw] of streams) {
      it(`is deterministic: the same seed gives bit-identical predictions (${streamName})`, () => {
        const block = draw(4000, 5);
        const a = prequential(c.make(block.schema, 1), block, 0, 4000, WEIGHTS);
        const b = prequential(c.make(block.schema, 1), block, 0, 4000, WEIGHTS);
        expect(sameBits(a, b)).toBe(true);
        expect(a.every(Number.isFinite)).toBe(true);
      });

      it(`restores from a JSON snapshot and gives identical next 1,000 predictions (${streamName})`, () => {
        const block = draw(4000, 9);
        const learner = c.make(block.schema, 2);
        prequential(learner, block, 0, 3000, WEIGHTS);
        const copy = c.restore(JSON.parse(JSON.stringify(learner.snapshot())) as LearnerSnapshot);
        expect(copy.kind).toBe(learner.kind);
        expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(learner.snapshot()));
        const a = prequential(learner, block, 3000, 4000, WEIGHTS);
        const b = prequential(copy, block, 3000, 4000, WEIGHTS);
        expect(sameBits(a, b)).toBe(true);
      });

      it(`leaves the model unchanged for weight 0 (${streamName})`, () => {
        const block = draw(1500, 10);
        const learner = c.make(block.schema, 6);
        prequential(learner, block, 0, 1000);
        const before = JSON.stringify(learner.snapshot());
        for (let i = 1000; i < 1500; i++) learner.train(block.rows, i * block.width, block.targets[i]!, 0);
        expect(JSON.stringify(learner.snapshot())).toBe(before);
      });
    }

    it('stays finite and close to the target under extreme weights and a large target scale', () => {
      // Importance-weight-aware updates (Karampatziakis & Langford, UAI 2011) never overshoot a row,
      // so a weight of 1,000 on rows with targets around 1e6 must not blow the model up.
      const block = friedman1(2000, 11);
      const learner = c.make(block.schema, 3);
      for (let i = 0; i < 2000; i++) {
        learner.train(block.rows, i * block.width, 1e6 + 1e3 * block.targets[i]!, i % 10 === 0 ? 1000 : 1);
      }
      for (let i = 0; i < 100; i++) {
        const y = learner.predict(block.rows, i * block.width);
        expect(Number.isFinite(y)).toBe(true);
        // Every target lies in 1e6 ± 40,000 (|Friedman #1| < 30 plus noise); a sane model predicts there.
        expect(Math.abs(y - 1e6)).toBeLessThan(40_000);
      }
    });

    it('predicts a finite number for a row with every value missing', () => {
      const block = mixedRegression(1000, 12);
      const learner = c.make(block.schema, 4);
      prequential(learner, block);
      const y = learner.predict(new Float64Array(block.width).fill(Number.NaN), 0);
      expect(Number.isFinite(y)).toBe(true);
    });

    it('reports a positive, finite size', () => {
      const block = friedman1(1000, 13);
      const learner = c.make(block.schema, 7);
      prequential(learner, block);
      const size = learner.sizeBytes();
      expect(size).toBeGreaterThan(0);
      expect(Number.isFinite(size)).toBe(true);
    });

    it('refuses bad input with a ShoalError naming the problem', () => {
      const block = mixedRegression(200, 14);
      const learner = c.make(block.schema, 8);
      prequential(learner, block);
      const row = block.rows.slice(0, 4);
      expectShoalError(() => learner.train(new Float64Array(3), 0, 1, 1), 'invalid-row', /4 values/);
      expectShoalError(() => learner.train(row, 1, 1, 1), 'invalid-row', /offset 1/);
      expectShoalError(() => learner.train(row, 0.5, 1, 1), 'invalid-row', /offset 0\.5/);
      expectShoalError(() => learner.predict(new Float64Array(3), 0), 'invalid-row', /4 values/);
      expectShoalError(() => learner.predict(row, -1), 'invalid-row', /offset -1/);
      // IEEE 754's infinities are no feature value; NaN is the missing-value marker and passes.
      const infinite = Float64Array.of(1, Number.NaN, 2, Number.NEGATIVE_INFINITY);
      expectShoalError(() => learner.train(infinite, 0, 1, 1), 'invalid-row', /feature 3 .*-Infinity/);
      expectShoalError(() => learner.predict(infinite, 0), 'invalid-row', /feature 3 .*-Infinity/);
      expectShoalError(() => learner.train(row, 0, Number.NaN, 1), 'invalid-label', /target.*NaN/);
      expectShoalError(() => learner.train(row, 0, Number.POSITIVE_INFINITY, 1), 'invalid-label', /Infinity/);
      expectShoalError(
        () => learner.train(row, 0, Number.NEGATIVE_INFINITY, 1),
        'invalid-label',
        /-Infinity/,
      );
      expectShoalError(() => learner.train(row, 0, 1, -1), 'invalid-weight', /weight.*-1/);
      expectShoalError(() => learner.train(row, 0, 1, Number.NaN), 'invalid-weight', /weight.*NaN/);
      expectShoalError(
        () => learner.train(row, 0, 1, Number.POSITIVE_INFINITY),
        'invalid-weight',
        /Infinity/,
      );
      const snapshot = learner.snapshot();
      expectShoalError(
        () => c.restore({ ...snapshot, kind: 'something-else' }),
        'invalid-snapshot',
        /something-else/,
      );
      expectShoalError(() => c.restore({ ...snapshot, version: 99 }), 'invalid-snapshot', /version 99/);
      expectShoalError(() => c.restore({ ...snapshot, state: {} }), 'invalid-snapshot', /base64/);
      // The refused calls changed nothing.
      expect(JSON.stringify(learner.snapshot())).toBe(JSON.stringify(snapshot));
    });

    it('refuses an empty schema', () => {
      expectShoalError(() => c.make({ features: [] }, 0), 'invalid-parameter', /at least one feature/);
    });
  });
}
