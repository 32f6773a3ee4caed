import { type FeatureSchema, numericSchema } from '../../src/core/index.js';
import { RegressionBagging, Verdict } from '../../src/ensembles/index.js';
import { HoeffdingRegressionTree } from '../../src/learners/hoeffding-regression-tree.js';
import { HoeffdingTree } from '../../src/learners/hoeffding-tree.js';
import { KnnWindow } from '../../src/learners/knn-window.js';
import type { Classifier } from '../../src/learners/learner.js';
import { LinearSvm } from '../../src/learners/linear-svm.js';
import { Logistic } from '../../src/learners/logistic.js';
import { Mlp } from '../../src/learners/mlp.js';
import { NaiveBayes } from '../../src/learners/naive-bayes.js';
import { friedman1 } from '../support/regressor-streams.js';
import { type BenchFn, type BenchRow, floorRate, machine, medianRate } from './harness.js';
import { benchStream } from './stream.js';

/**
 * Learners: rows per second of the prequential step (`scoreTrain`) for each learner with its
 * default options on the 10-feature, 2-class stream of `stream.ts` (SEA rule on two features, 10% label
 * noise: accuracy cannot exceed 90%), beside the bare-loop floor over the same rows and with the prequential
 * accuracy of the run. A fresh learner is built for every timed run, so a rate includes the early rows.
 * knn-window scans its whole window for every row; it gets one timed run without warm-up to keep the
 * section short. Regression: the regression tree alone and bagged ×10 (`task: regression`'s default
 * ensemble) on Friedman #1 (Friedman, Ann. Statist. 1991: 10 uniform features, 5 of them used, unit
 * noise), with the prequential RMSE of the run.
 */
const LEARNERS: readonly { name: string; make: (schema: FeatureSchema) => Classifier; runs: number }[] = [
  { name: 'hoeffding-tree', make: (s) => new HoeffdingTree(s, {}, 'bench-tree'), runs: 3 },
  { name: 'naive-bayes', make: (s) => new NaiveBayes(s), runs: 3 },
  { name: 'logistic', make: (s) => new Logistic(s), runs: 3 },
  { name: 'linear-svm', make: (s) => new LinearSvm(s), runs: 3 },
  { name: 'mlp', make: (s) => new Mlp(s, {}, 'bench-mlp'), runs: 3 },
  { name: 'knn-window', make: (s) => new KnnWindow(s), runs: 1 },
];

export const bench: BenchFn = ({ quick }) => {
  const count = quick ? 20_000 : 200_000;
  const { rows: values, labels, width } = benchStream(count, 'bench-learners');
  const schema = numericSchema(width);
  const floor = floorRate(values, count);
  const rows: BenchRow[] = [
    { name: 'floor (bare loop, 10-feature rows)', rate: floor, unit: 'rows/s', ofFloor: 1 },
  ];
  const json: Record<string, unknown> = { machine: machine(), rows: count, floor: { rowsPerSecond: floor } };
  const out = new Float64Array(2);
  for (const { name, make, runs } of LEARNERS) {
    let correct = 0;
    let size = 0;
    const rate = medianRate(
      count,
      () => {
        const learner = make(schema);
        learner.ensureClasses(2);
        correct = 0;
        for (let i = 0; i < count; i++) {
          if (learner.scoreTrain(values, i * width, labels[i]!, 1, out, 0) === labels[i]) correct++;
        }
        size = learner.sizeBytes();
        return correct;
      },
      runs,
      runs > 1 ? 1 : 0,
    );
    const accuracy = correct / count;
    rows.push({
      name,
      rate,
      unit: 'rows/s',
      ofFloor: rate / floor,
      accuracy,
      note: `${size} bytes of state`,
    });
    json[name] = { rowsPerSecond: rate, ofFloor: rate / floor, accuracy, sizeBytes: size };
  }
  const block = friedman1(count / 2, 1);
  const regression = [
    { name: 'hoeffding-regression-tree', make: () => new HoeffdingRegressionTree(block.schema) },
    {
      name: 'regression bagging ×10',
      make: () => new RegressionBagging(block.schema, {}, 'bench-regression'),
    },
  ];
  const verdict = new Verdict();
  for (const { name, make } of regression) {
    let squares = 0;
    let size = 0;
    const rate = medianRate(block.targets.length, () => {
      const model = make();
      squares = 0;
      for (let i = 0; i < block.targets.length; i++) {
        const y = block.targets[i]!;
        if (model instanceof RegressionBagging) model.scoreTrain(block.rows, i * block.width, y, verdict);
        else {
          verdict.value = model.predict(block.rows, i * block.width);
          model.train(block.rows, i * block.width, y, 1);
        }
        squares += (verdict.value - y) ** 2;
      }
      size = model.sizeBytes();
      return squares;
    });
    const rmse = Math.sqrt(squares / block.targets.length);
    rows.push({
      name: `${name} (Friedman #1)`,
      rate,
      unit: 'rows/s',
      ofFloor: rate / floor,
      note: `RMSE ${rmse.toFixed(3)} (noise sd 1), ${size} bytes of state`,
    });
    json[name] = { rowsPerSecond: rate, ofFloor: rate / floor, rmse, sizeBytes: size };
  }
  rows.push(regressionLongRun(quick ? 50_000 : 500_000, floor, json));
  return { title: 'Learners', rows, json };
};

/**
 * The regression ensemble over a long stream (Friedman #1, one run): its rate over the first and the
 * last fifth of the rows, its RMSE over the last fifth and its size at the end, which show what its
 * trees' byte limit does — without one, a regression ensemble grows and slows with the stream.
 */
function regressionLongRun(count: number, floor: number, json: Record<string, unknown>): BenchRow {
  const block = friedman1(count, 2);
  const model = new RegressionBagging(block.schema, {}, 'bench-regression-long');
  const verdict = new Verdict();
  const fifth = Math.floor(count / 5);
  const rates: number[] = [];
  let squares = 0;
  let started = performance.now();
  for (let i = 0; i < count; i++) {
    const y = block.targets[i]!;
    model.scoreTrain(block.rows, i * block.width, y, verdict);
    if (i >= count - fifth) squares += (verdict.value - y) ** 2;
    if ((i + 1) % fifth === 0) {
      const now = performance.now();
      rates.push((fifth / (now - started)) * 1000);
      started = now;
    }
  }
  const rmse = Math.sqrt(squares / fifth);
  const size = model.sizeBytes();
  const first = rates[0]!;
  const last = rates[rates.length - 1]!;
  json.regressionLongRun = {
    rows: count,
    firstFifth: first,
    lastFifth: last,
    rmseLastFifth: rmse,
    sizeBytes: size,
  };
  return {
    name: `regression bagging ×10, ${count.toLocaleString('en-US')} rows (Friedman #1), last fifth`,
    rate: last,
    unit: 'rows/s',
    ofFloor: last / floor,
    note: `${(last / first).toFixed(2)}× the first fifth; RMSE ${rmse.toFixed(3)} over it; ${(size / 1e6).toFixed(1)} MB at the end`,
  };
}
