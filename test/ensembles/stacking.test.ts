import { describe, expect, it } from 'vitest';
import { Stacking, Verdict } from '../../src/ensembles/index.js';
import { type ClassifierKind, createClassifier } from '../../src/learners/index.js';
import { buildStream, led, type StreamGenerator, sea, take } from '../../src/streams/index.js';
import { note } from '../support/note.js';
import { prequential, recordingJournal } from '../support/prequential.js';

const MEMBERS: readonly ClassifierKind[] = ['hoeffding-tree', 'knn-window', 'linear-svm', 'naive-bayes'];

/** Prequential accuracy of one learner on its own, on the same rows the stacking's member sees. */
function alone(kind: ClassifierKind, gen: StreamGenerator, rows: number): number {
  const learner = createClassifier({ kind }, gen.schema, 1);
  learner.ensureClasses(gen.classes.length);
  const block = take(gen, rows);
  const out = new Float64Array(gen.classes.length);
  let right = 0;
  for (let i = 0; i < rows; i++) {
    if (learner.scoreTrain(block.rows, i * block.width, block.labels[i]!, 1, out, 0) === block.labels[i])
      right++;
  }
  return right / rows;
}

describe('online stacking (Wolpert 1992, streaming form)', () => {
  it.each([
    ['SEA θ = 8, 10% noise', () => sea({ threshold: 8, noise: 0.1 }, 3), 20_000],
    ['LED, 10% noise', () => led({ noise: 0.1 }, 3), 40_000],
  ] as const)(
    '%s: tree + kNN + linear SVM + naive Bayes under an MLP is within 0.5 points of its best member, or better',
    (name, gen, rows) => {
      // Streams: SEA (Street & Kim 2001) and LED (Breiman et al. 1984), PUBLISHED.md. The members score every
      // row before training on it, so the meta-learner learns from out-of-sample outputs.
      const stacked = prequential(
        new Stacking(gen().schema, { learners: MEMBERS.map((kind) => ({ kind })), meta: { kind: 'mlp' } }, 1),
        gen(),
        rows,
      ).accuracy;
      const members = MEMBERS.map((kind) => alone(kind, gen(), rows));
      const best = Math.max(...members);
      note(
        `${name}: stacking ${stacked.toFixed(4)}; members ${MEMBERS.map((k, i) => `${k} ${members[i]!.toFixed(4)}`).join(', ')}`,
      );
      expect(stacked).toBeGreaterThanOrEqual(best - 0.005);
    },
    // Four members and a meta-learner over 40,000 rows: well over the 10 s default on a shared machine.
    180_000,
  );

  it('routes the holdout share to the meta-learner only', () => {
    const gen = sea({}, 4);
    const stack = new Stacking(
      gen.schema,
      { learners: [{ kind: 'naive-bayes' }], holdout: 0.25, lifecycle: { enabled: false } },
      2,
    );
    prequential(stack, gen, 8000);
    const nb = stack.snapshot().lifecycle.seats[0]!.member.state as { classWeight: string };
    const trained = Buffer.from(nb.classWeight, 'base64');
    const weights = new Float64Array(trained.buffer, trained.byteOffset, trained.byteLength / 8);
    const seen = weights[0]! + weights[1]!;
    // 8,000 rows, a quarter held out: the member trains on about 6,000 (binomial, ± 4 standard errors).
    expect(Math.abs(seen - 6000)).toBeLessThan(4 * Math.sqrt(8000 * 0.25 * 0.75));
  });

  it('resets the meta-learner on a replaced member’s inputs and reports agreement', () => {
    const journal = recordingJournal();
    const stream = () => buildStream({ generator: 'stagger', concepts: 'a,c', every: 2000, seed: 9 });
    const stack = new Stacking(
      stream().schema,
      { learners: [{ kind: 'naive-bayes' }, { kind: 'hoeffding-tree' }] },
      3,
      journal.sink,
    );
    const run = prequential(stack, stream(), 4000);
    expect(journal.records.some((r) => r.to === 'retired')).toBe(true);
    expect(run.accuracy).toBeGreaterThan(0.9);
    const v = new Verdict();
    stack.score(new Float64Array([0, 0, 0]), 0, v);
    expect(v.voters).toBe(2);
    expect([0, 0.5, 1]).toContain(v.agreement);
  });

  it('refuses bad options, naming them', () => {
    const schema = sea().schema;
    expect(() => new Stacking(schema, { holdout: 1 })).toThrow(/holdout/);
    expect(() => new Stacking(schema, { holdout: -0.1 })).toThrow(/holdout/);
    expect(() => new Stacking(schema, { meta: { kind: 'tree' } as unknown as { kind: 'mlp' } })).toThrow(
      /meta.kind/,
    );
    expect(() => new Stacking(schema, { learners: [] })).toThrow(/learners/);
  });
});
