import { describe, expect, it } from 'vitest';
import type { JournalRecord } from '../../src/journal/index.js';
import { LearningLoop, resolveConfig } from '../../src/pipeline/index.js';
import { buildStream, rbf, type StreamGenerator, take } from '../../src/streams/index.js';

/** Feed `rows` rows of a generator to a loop in batches of 500, labels optionally hidden. */
function feed(
  loop: LearningLoop,
  gen: StreamGenerator,
  rows: number,
  hideLabel = (_i: number) => false,
): void {
  const width = gen.schema.features.length;
  for (let done = 0; done < rows; done += 500) {
    const block = take(gen, 500);
    const labels = Float64Array.from(block.labels, (l, i) => (hideLabel(done + i) ? Number.NaN : l));
    loop.prequential({ schema: gen.schema, rows: 500, width, values: block.rows, labels }, gen.classes);
  }
}

function run(gen: () => StreamGenerator, rows: number, raw: unknown = {}, hide?: (i: number) => boolean) {
  const records: JournalRecord[] = [];
  let t = 0;
  const loop = new LearningLoop({
    config: resolveConfig(raw, 'test'),
    source: 'test stream',
    journal: (r) => records.push(r),
    clock: () => (t += 1),
    version: '0.0.0-test',
  });
  feed(loop, gen(), rows, hide);
  const summary = loop.finish(gen().classes);
  return { loop, records, summary };
}

describe('the learning loop', () => {
  it('journals the run, lifecycle changes, evaluation windows and a summary that agree with each other', () => {
    const { records, summary } = run(
      () => buildStream({ generator: 'stagger', concepts: 'a,c', every: 3000, seed: 2 }),
      6000,
      {
        evaluation: { journalEvery: 1000 },
      },
    );
    expect(records[0]).toMatchObject({ type: 'run', source: 'test stream', shoal: '0.0.0-test', seed: '1' });
    const windows = records.filter((r) => r.type === 'window');
    expect(windows.map((w) => w.trained)).toEqual([1000, 2000, 3000, 4000, 5000, 6000]);
    const lifecycle = records.filter((r) => r.type === 'lifecycle');
    expect(summary.replacements).toBe(lifecycle.filter((r) => r.to === 'retired').length);
    expect(summary.warnings).toBe(lifecycle.filter((r) => r.to === 'watched').length);
    expect(summary.replacements).toBeGreaterThan(0);
    expect(records.at(-1)).toEqual(summary);
    expect(summary.rows).toBe(6000);
    // Confusion matrix counts add up to the rows judged, and its diagonal to the accuracy.
    const total = summary.confusion.flat().reduce((a, b) => a + b, 0);
    const right = summary.confusion.reduce((a, row, i) => a + row[i]!, 0);
    expect(total).toBe(6000);
    expect(right / total).toBeCloseTo(summary.accuracy!, 12);
  });

  it('scores rows without a label but judges and trains only the labelled ones', () => {
    const { loop, summary } = run(
      () => buildStream({ generator: 'sea', seed: 3 }),
      3000,
      {},
      (i) => i % 3 === 0,
    );
    expect(loop.rows).toBe(3000);
    expect(summary.rows).toBe(2000);
    expect(loop.model!.rows).toBe(2000);
  });

  it('writes an input-drift record when a feature’s distribution moves, before any label says so', () => {
    // Random RBF with moving centroids (Kirkby 2007; Bifet et al. KDD 2009): the features' distribution
    // drifts; with still centroids it does not.
    const moving = run(() => rbf({ features: 4, centroids: 5, speed: 0.002 }, 4), 6000, {
      ensemble: { members: 2 },
    });
    const still = run(() => rbf({ features: 4, centroids: 5, speed: 0 }, 4), 6000, {
      ensemble: { members: 2 },
    });
    const drifts = moving.records.filter((r) => r.type === 'input-drift');
    expect(drifts.length).toBeGreaterThan(0);
    expect(drifts[0]).toMatchObject({ kind: 'numeric' });
    expect(moving.summary.inputDrifts).toBe(drifts.length);
    expect(still.summary.inputDrifts).toBeLessThan(drifts.length);
  });

  it('skips input monitoring when switched off', () => {
    const { records } = run(() => rbf({ features: 4, centroids: 5, speed: 0.002 }, 4), 3000, {
      inputs: { monitor: false },
      ensemble: { members: 2 },
    });
    expect(records.some((r) => r.type === 'input-drift')).toBe(false);
  });
});
