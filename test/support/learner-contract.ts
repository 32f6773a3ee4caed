import { describe, expect, it } from 'vitest';
import type { Classifier, LearnerSnapshot } from '../../src/learners/learner.js';
import { MAX_CLASSES } from '../../src/learners/learner.js';
import { type StreamGenerator, sea, stagger, take } from '../../src/streams/index.js';
import { expectShoalError } from './errors.js';

/**
 * The contract suite every classifier passes (one suite, every implementation — see DEVELOPERS.md):
 * determinism, snapshot round trip, score-then-train equivalence, growing classes and bad input.
 * Streams are the published SEA (Street & Kim 2001) and STAGGER (Schlimmer & Granger 1986) concepts.
 */
export interface LearnerCase {
  readonly name: string;
  /** Build a fresh learner for the given generator's schema and seed. */
  make(generator: StreamGenerator, seed: number): Classifier;
  restore(snapshot: LearnerSnapshot): Classifier;
}

function run(learner: Classifier, generator: StreamGenerator, rows: number): Float64Array {
  const block = take(generator, rows);
  const classes = generator.classes.length;
  learner.ensureClasses(classes);
  const out = new Float64Array(rows * classes);
  for (let i = 0; i < rows; i++) {
    learner.scoreTrain(block.rows, i * block.width, block.labels[i]!, 1 + (i % 3), out, i * classes);
  }
  return out;
}

export function describeLearnerContract(c: LearnerCase): void {
  describe(`${c.name} keeps the learner contract`, () => {
    for (const [streamName, makeStream] of [
      ['SEA', (seed: number) => sea({ threshold: 8, noise: 0.1 }, seed)],
      ['STAGGER', (seed: number) => stagger({ concept: 'b' }, seed)],
    ] as const) {
      it(`is deterministic: the same seed gives bit-identical scores (${streamName})`, () => {
        const a = run(c.make(makeStream(5), 1), makeStream(5), 3000);
        const b = run(c.make(makeStream(5), 1), makeStream(5), 3000);
        expect(Buffer.from(b.buffer).equals(Buffer.from(a.buffer))).toBe(true);
      });

      it(`restores from a JSON snapshot and gives identical next 1,000 scores (${streamName})`, () => {
        const gen = makeStream(9);
        const learner = c.make(gen, 2);
        run(learner, gen, 2000);
        const copy = c.restore(JSON.parse(JSON.stringify(learner.snapshot())) as LearnerSnapshot);
        expect(copy.classes).toBe(learner.classes);
        const state = gen.snapshot();
        const a = run(learner, gen, 1000);
        gen.restore(state);
        const b = run(copy, gen, 1000);
        expect(Buffer.from(b.buffer).equals(Buffer.from(a.buffer))).toBe(true);
      });
    }

    it('scoreTrain is score followed by train', () => {
      const gen = sea({}, 4);
      const block = take(gen, 1500);
      const one = c.make(gen, 3);
      const two = c.make(gen, 3);
      one.ensureClasses(2);
      two.ensureClasses(2);
      const p = new Float64Array(2);
      const q = new Float64Array(2);
      for (let i = 0; i < 1500; i++) {
        const off = i * block.width;
        const k1 = one.scoreTrain(block.rows, off, block.labels[i]!, 1, p, 0);
        const k2 = two.score(block.rows, off, q, 0);
        two.train(block.rows, off, block.labels[i]!, 1);
        expect(k1).toBe(k2);
        expect(p[0]).toBe(q[0]);
        expect(p[1]).toBe(q[1]);
      }
    });

    it('writes a probability distribution that sums to 1 and predicts its most probable class', () => {
      const gen = stagger({ concept: 'a' }, 6);
      const learner = c.make(gen, 4);
      const block = take(gen, 500);
      const out = new Float64Array(2);
      for (let i = 0; i < 500; i++) {
        const k = learner.scoreTrain(block.rows, i * block.width, block.labels[i]!, 1, out, 0);
        expect(Math.abs(out[0]! + out[1]! - 1)).toBeLessThan(1e-9);
        expect(out[k]).toBe(Math.max(out[0]!, out[1]!));
      }
    });

    it('grows its class count when a new label arrives', () => {
      const gen = sea({}, 8);
      const learner = c.make(gen, 5);
      const block = take(gen, 300);
      for (let i = 0; i < 300; i++) learner.train(block.rows, i * block.width, block.labels[i]!, 1);
      expect(learner.classes).toBeLessThanOrEqual(2);
      learner.train(block.rows, 0, 2, 1);
      expect(learner.classes).toBe(3);
      const out = new Float64Array(3);
      const k = learner.score(block.rows, 0, out, 0);
      expect(k).toBeGreaterThanOrEqual(0);
      expect(k).toBeLessThan(3);
      expect(Math.abs(out[0]! + out[1]! + out[2]! - 1)).toBeLessThan(1e-9);
    });

    it('leaves the model unchanged for weight 0', () => {
      const gen = sea({}, 10);
      const learner = c.make(gen, 6);
      run(learner, gen, 300);
      const before = JSON.stringify(learner.snapshot());
      const block = take(gen, 50);
      for (let i = 0; i < 50; i++) learner.train(block.rows, i * block.width, block.labels[i]!, 0);
      expect(JSON.stringify(learner.snapshot())).toBe(before);
    });

    it('reports a positive, finite size', () => {
      const gen = sea({}, 12);
      const learner = c.make(gen, 7);
      run(learner, gen, 500);
      const size = learner.sizeBytes();
      expect(size).toBeGreaterThan(0);
      expect(Number.isFinite(size)).toBe(true);
    });

    it('treats a non-integer or out-of-range nominal code exactly as a missing value', () => {
      // STAGGER's three nominal features have codes 0, 1, 2; every 4th row gets a bad code instead (or NaN).
      const bad = [1.5, -1, 3, 2.0000001, 1e9, -0.5];
      const gen = stagger({ concept: 'b' }, 21);
      const block = take(gen, 2000);
      const withBad = Float64Array.from(block.rows);
      const withNaN = Float64Array.from(block.rows);
      for (let i = 0; i < block.labels.length; i += 4) {
        const at = i * block.width + (i % block.width);
        withBad[at] = bad[(i / 4) % bad.length]!;
        withNaN[at] = Number.NaN;
      }
      const a = c.make(gen, 9);
      const b = c.make(gen, 9);
      a.ensureClasses(2);
      b.ensureClasses(2);
      const p = new Float64Array(2);
      const q = new Float64Array(2);
      for (let i = 0; i < block.labels.length; i++) {
        const off = i * block.width;
        const k1 = a.scoreTrain(withBad, off, block.labels[i]!, 1, p, 0);
        const k2 = b.scoreTrain(withNaN, off, block.labels[i]!, 1, q, 0);
        expect(k1).toBe(k2);
        expect(p[0]).toBe(q[0]);
      }
      expect(JSON.stringify(a.snapshot())).toBe(JSON.stringify(b.snapshot()));
    });

    it('refuses bad input with a ShoalError naming the problem', () => {
      const gen = sea({}, 14);
      const learner = c.make(gen, 8);
      const row = new Float64Array([1, 2, 3]);
      const out = new Float64Array(2);
      expectShoalError(() => learner.train(new Float64Array(2), 0, 0, 1), 'invalid-row', /3 values/);
      expectShoalError(() => learner.train(row, 1, 0, 1), 'invalid-row', /offset 1/);
      expectShoalError(() => learner.score(new Float64Array(2), 0, out, 0), 'invalid-row', /3 values/);
      // IEEE 754's infinities are no feature value; NaN is the missing-value marker and passes.
      const before = JSON.stringify(learner.snapshot());
      const infinite = Float64Array.of(Number.NaN, Number.POSITIVE_INFINITY, 3);
      expectShoalError(() => learner.train(infinite, 0, 0, 1), 'invalid-row', /feature 1 .* Infinity/);
      expectShoalError(() => learner.score(infinite, 0, out, 0), 'invalid-row', /feature 1 .* Infinity/);
      infinite[1] = Number.NEGATIVE_INFINITY;
      expectShoalError(() => learner.scoreTrain(infinite, 0, 1, 1, out, 0), 'invalid-row', /-Infinity/);
      expect(JSON.stringify(learner.snapshot())).toBe(before);
      expectShoalError(() => learner.train(row, 0, Number.NaN, 1), 'invalid-label', /NaN/);
      expectShoalError(() => learner.train(row, 0, -1, 1), 'invalid-label', /-1/);
      expectShoalError(() => learner.train(row, 0, 0.5, 1), 'invalid-label', /0\.5/);
      expectShoalError(() => learner.train(row, 0, MAX_CLASSES, 1), 'invalid-label', /label/);
      expectShoalError(() => learner.train(row, 0, 1, -1), 'invalid-weight', /-1/);
      expectShoalError(() => learner.train(row, 0, 1, Number.NaN), 'invalid-weight', /NaN/);
      expectShoalError(() => learner.scoreTrain(row, 0, 1, -2, out, 0), 'invalid-weight', /-2/);
      expectShoalError(
        () => c.restore({ ...learner.snapshot(), kind: 'something-else' }),
        'invalid-snapshot',
        /something-else/,
      );
    });
  });
}
