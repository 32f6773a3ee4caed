import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
// Worker threads load compiled files, so this test uses the build in dist/ (npm test builds first).
import { Bagging, BatchVerdicts, Verdict } from '../../dist/ensembles/index.js';
import { ParallelBagging } from '../../dist/parallel/index.js';
import { sea, take } from '../../src/streams/index.js';

describe('parallel bagging', () => {
  it.each([2, 3])('gives verdicts identical to one thread with members over %i threads', async (threads) => {
    // Members of online bagging are independent (Oza & Russell 2001): splitting them changes nothing.
    const gen = sea({ noise: 0.1 }, 21);
    const block = take(gen, 6000);
    const labels = Float64Array.from(block.labels);
    const spec = { members: 7, lambda: 1, lifecycle: { enabled: false } } as const;
    const single = new Bagging(gen.schema, spec, 'p');
    single.ensureClasses(2);
    const parallel = await ParallelBagging.start(gen.schema, spec, 'p', threads);
    parallel.ensureClasses(2);
    try {
      const verdict = new Verdict();
      const out = new BatchVerdicts();
      for (let s = 0; s < 6000; s += 500) {
        await parallel.scoreTrainBatch(block.rows.subarray(s * 3), labels.subarray(s), 500, out);
        for (let r = 0; r < 500; r++) {
          single.scoreTrain(block.rows, (s + r) * 3, block.labels[s + r]!, verdict);
          expect(out.probabilities[r * 2 + 1]).toBe(verdict.probabilities[1]);
          expect(out.predicted[r]).toBe(verdict.predicted);
          expect(out.agreement[r]).toBe(verdict.agreement);
        }
      }
      const scored = new BatchVerdicts();
      await parallel.scoreBatch(block.rows, 100, scored);
      for (let r = 0; r < 100; r++) {
        single.score(block.rows, r * 3, verdict);
        expect(scored.probabilities[r * 2]).toBe(verdict.probabilities[0]);
      }
    } finally {
      await parallel.close();
    }
  });

  it('grows classes in the middle of a batch and gives the verdicts and seat accuracies of one thread', async () => {
    // Members answer into shared memory with room for every class the batch's labels bring; a class
    // learnt in the middle of a batch widens the rows after it (Oza & Russell 2001: members independent).
    const gen = sea({ noise: 0.1 }, 3);
    const block = take(gen, 3000);
    const labels = Float64Array.from(block.labels, (l, i) =>
      i >= 1800 && i % 7 === 0 ? 3 : i >= 700 && i % 5 === 0 ? 2 : l,
    );
    for (const enabled of [false, true]) {
      const spec = { members: 5, lambda: 1, lifecycle: { enabled } } as const;
      const single = new Bagging(gen.schema, spec, 'g');
      single.ensureClasses(2);
      const parallel = await ParallelBagging.start(gen.schema, spec, 'g', 2);
      parallel.ensureClasses(2);
      try {
        const verdict = new Verdict();
        const got = new Verdict();
        const out = new BatchVerdicts();
        for (let s = 0; s < 3000; s += 500) {
          await parallel.scoreTrainBatch(block.rows.subarray(s * 3), labels.subarray(s), 500, out);
          for (let r = 0; r < 500; r++) {
            single.scoreTrain(block.rows, (s + r) * 3, labels[s + r]!, verdict);
            out.verdictAt(r, got);
            expect(Array.from(got.probabilities)).toEqual(Array.from(verdict.probabilities));
            expect([got.predicted, got.agreement]).toEqual([verdict.predicted, verdict.agreement]);
            for (let m = 0; m < 5; m++) expect(out.accuracy[r * 5 + m]).toBe(single.recentAccuracy(m));
          }
        }
        expect(single.classes).toBe(4);
      } finally {
        await parallel.close();
      }
    }
  });

  it.each([
    ['label', 'after it', false],
    ['label', 'while it is out', true],
    ['feature value', 'after it', false],
    ['feature value', 'while it is out', true],
  ])(
    'raises a bad %s from every thread as the shard would, and goes on with the next batch sent %s',
    async (bad, _, early) => {
      const gen = sea({ noise: 0.1 }, 5);
      const block = take(gen, 300);
      const rows = Float64Array.from(block.rows);
      const spec = { members: 4, lambda: 1, lifecycle: { enabled: false } } as const;
      const single = new Bagging(gen.schema, spec, 'p');
      single.ensureClasses(2);
      const parallel = await ParallelBagging.start(gen.schema, spec, 'p', 2);
      parallel.ensureClasses(2);
      try {
        const out = new BatchVerdicts();
        const next = new BatchVerdicts();
        const labels = Float64Array.from(block.labels);
        // A label that is no class code, or an infinite value (IEEE 754's ±∞ is no feature value), at row 10.
        if (bad === 'label') labels[10] = 1.5;
        else rows[10 * 3 + 1] = Number.NEGATIVE_INFINITY;
        const failing = parallel.scoreTrainBatch(rows, labels, 100, out);
        const sent = early
          ? parallel.scoreTrainBatch(rows.subarray(300), labels.subarray(100), 100, next)
          : null;
        await expect(failing).rejects.toMatchObject(
          bad === 'label'
            ? { code: 'invalid-label', message: expect.stringMatching(/label must be an integer/) }
            : {
                code: 'invalid-row',
                message: expect.stringMatching(/feature 1 of the row at offset 30 is -Infinity/),
              },
        );
        const verdict = new Verdict();
        for (let r = 0; r < 10; r++) single.scoreTrain(block.rows, r * 3, block.labels[r]!, verdict);
        await (sent ?? parallel.scoreTrainBatch(rows.subarray(300), labels.subarray(100), 100, next));
        for (let r = 0; r < 100; r++) {
          single.scoreTrain(block.rows, (100 + r) * 3, block.labels[100 + r]!, verdict);
          expect(next.probabilities[r * 2 + 1]).toBe(verdict.probabilities[1]);
        }
      } finally {
        await parallel.close();
      }
    },
  );

  it('refuses a batch whose buffer is shorter than its rows, naming both counts', async () => {
    const gen = sea({}, 2);
    const parallel = await ParallelBagging.start(
      gen.schema,
      { members: 2, lifecycle: { enabled: false } },
      1,
      2,
    );
    try {
      const out = new BatchVerdicts();
      await expect(parallel.scoreBatch(new Float64Array(30), 11, out)).rejects.toMatchObject({
        code: 'invalid-row',
        message: expect.stringMatching(/11 rows needs 33 values, the buffer holds 30/),
      });
      await expect(
        parallel.scoreTrainBatch(new Float64Array(30), new Float64Array(9), 10, out),
      ).rejects.toMatchObject({ code: 'invalid-label', message: expect.stringMatching(/10 labels, got 9/) });
    } finally {
      await parallel.close();
    }
  });

  it.each([
    ['it', 'null', ''],
    // Idle threads in a pool hold the process no more than a forgotten ensemble does.
    ['the pool its threads went back to', 'new ShardPool()', 'await bag.close();'],
  ])('lets the process exit when the caller forgets to close %s', (_, pool, close) => {
    const script = `
      import { ParallelBagging, ShardPool } from ${JSON.stringify(new URL('../../dist/parallel/index.js', import.meta.url).href)};
      import { BatchVerdicts } from ${JSON.stringify(new URL('../../dist/ensembles/index.js', import.meta.url).href)};
      import { numericSchema } from ${JSON.stringify(new URL('../../dist/core/index.js', import.meta.url).href)};
      const pool = ${pool};
      const bag = await ParallelBagging.start(numericSchema(2), { members: 2, lifecycle: { enabled: false } }, 1, 2, () => {}, pool);
      await bag.scoreTrainBatch(new Float64Array([1, 2, 3, 4]), [0, 1], 2, new BatchVerdicts());
      ${close}
      process.stdout.write('scored');
    `;
    const child = spawnSync(process.execPath, ['--input-type=module', '-e', script], {
      encoding: 'utf8',
      timeout: 20_000,
    });
    expect(child.stderr).toBe('');
    expect(child.stdout).toBe('scored');
    expect(child.status).toBe(0);
  });

  it('takes a second and a third batch while one is out, refuses a fourth, and refuses batches while a snapshot is taken', async () => {
    const gen = sea({}, 3);
    const block = take(gen, 800);
    const spec = { members: 3, lambda: 1, lifecycle: { enabled: false } } as const;
    const single = new Bagging(gen.schema, spec, 1);
    single.ensureClasses(2);
    const parallel = await ParallelBagging.start(gen.schema, spec, 1, 2);
    parallel.ensureClasses(2);
    const labels = Float64Array.from(block.labels);
    try {
      const outs = Array.from({ length: 4 }, () => new BatchVerdicts());
      const batch = (k: number): Promise<void> =>
        parallel.scoreTrainBatch(block.rows.subarray(600 * k), labels.subarray(200 * k), 200, outs[k]!);
      const first = batch(0);
      const second = batch(1);
      const third = batch(2);
      await expect(parallel.scoreBatch(block.rows, 200, new BatchVerdicts())).rejects.toMatchObject({
        code: 'invalid-parameter',
        message: expect.stringMatching(/3 batches are still out/),
      });
      await first;
      const fourth = batch(3);
      await second;
      await third;
      await fourth;
      // In the order sent, as one thread row after row (members are independent: Oza & Russell 2001).
      const verdict = new Verdict();
      for (let r = 0; r < 800; r++) {
        single.scoreTrain(block.rows, r * 3, block.labels[r]!, verdict);
        expect(outs[Math.floor(r / 200)]!.probabilities[(r % 200) * 2 + 1]).toBe(verdict.probabilities[1]);
      }
      const last = parallel.scoreBatch(block.rows, 100, new BatchVerdicts());
      const snapshot = parallel.snapshot();
      await expect(parallel.scoreBatch(block.rows, 100, new BatchVerdicts())).rejects.toMatchObject({
        code: 'invalid-parameter',
        message: expect.stringMatching(/a snapshot is being taken/),
      });
      await last;
      expect(JSON.stringify(await snapshot)).toBe(JSON.stringify(single.snapshot()));
    } finally {
      await parallel.close();
    }
  });
});
