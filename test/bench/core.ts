import { numericSchema } from '../../src/core/index.js';
import { createEnsemble, type Ensemble, type EnsembleSpec, Verdict } from '../../src/ensembles/index.js';
import { type BenchFn, type BenchRow, floorRate, machine, medianRate } from './harness.js';
import { benchStream } from './stream.js';
import { yardstickRate } from './yardstick.js';

/**
 * The learning core, one thread: prequential rows per second (score the row, then train on it) of
 * ensembles on the 10-feature, 2-class stream of `stream.ts`, with the prequential accuracy beside each
 * speed so that speed never hides a loss of quality (the stream's Bayes bound is 90%). Each timed run
 * builds a fresh ensemble, so a rate includes the early rows. `score10` times scoring alone with the
 * 10-member bagging trained on the whole stream.
 *
 * `yardstick10` is the same work stripped to its arithmetic (see `yardstick.ts`): what this machine allows.
 * `bagging10small` is `bagging10` with a quarter of the default byte cap per tree (the default's ten trees
 * fit a 2 MiB L2 since leaf statistics are single precision; this one's fit far smaller caches).
 * `bagging10` and `bagging30` are classic online bagging (Oza & Russell: λ = 1, no lifecycle) of
 * Hoeffding trees with naive-Bayes-adaptive leaves; `default10` is what `shoal replay` runs without a
 * configuration (λ = 6 and an ADWIN monitor per member).
 */
const PLAIN = { lifecycle: { enabled: false } } as const;

/** A quarter of the default byte cap per tree (128 KiB). */
const SMALL_CAP = 32 * 1024;

const CASES: readonly { key: string; name: string; spec: EnsembleSpec; share: number; runs: number }[] = [
  {
    key: 'tree1',
    name: 'one Hoeffding tree',
    spec: { kind: 'bagging', members: 1, lambda: 1, ...PLAIN },
    share: 1,
    runs: 3,
  },
  {
    key: 'bagging10',
    name: 'bagging ×10 (λ = 1)',
    spec: { kind: 'bagging', members: 10, lambda: 1, ...PLAIN },
    share: 1,
    runs: 3,
  },
  {
    key: 'bagging10small',
    name: 'bagging ×10 (λ = 1), 32 KiB cap per tree',
    spec: {
      kind: 'bagging',
      members: 10,
      lambda: 1,
      learners: [{ kind: 'hoeffding-tree', byteLimit: SMALL_CAP }],
      ...PLAIN,
    },
    share: 1,
    runs: 3,
  },
  {
    key: 'bagging30',
    name: 'bagging ×30 (λ = 1)',
    spec: { kind: 'bagging', members: 30, lambda: 1, ...PLAIN },
    share: 1,
    runs: 3,
  },
  {
    key: 'boosting10',
    name: 'boosting ×10',
    spec: { kind: 'boosting', members: 10, ...PLAIN },
    share: 1,
    runs: 3,
  },
  {
    key: 'default10',
    name: 'default: bagging ×10, λ = 6, ADWIN lifecycle',
    spec: { kind: 'bagging' },
    share: 1,
    runs: 3,
  },
  {
    key: 'stacking',
    name: 'stacking (tree, kNN, SVM, NB; logistic meta)',
    spec: { kind: 'stacking', ...PLAIN },
    share: 0.05,
    runs: 1,
  },
];

function prequential(
  ensemble: Ensemble,
  values: Float64Array,
  labels: Int32Array,
  rows: number,
  width: number,
): number {
  const verdict = new Verdict();
  let correct = 0;
  for (let i = 0; i < rows; i++) {
    ensemble.scoreTrain(values, i * width, labels[i]!, verdict);
    if (verdict.predicted === labels[i]) correct++;
  }
  return correct;
}

export const bench: BenchFn = ({ quick }) => {
  const count = quick ? 50_000 : 1_000_000;
  const { rows: values, labels, width } = benchStream(count, 'bench-core');
  const schema = numericSchema(width);
  const floor = floorRate(values, count);
  const yardstick = yardstickRate(values, labels, count, width, true);
  const rows: BenchRow[] = [
    { name: 'floor (bare loop, 10-feature rows)', rate: floor, unit: 'rows/s', ofFloor: 1 },
    {
      name: 'yardstick: 10 fixed trees, NB + Welford only',
      rate: yardstick,
      unit: 'rows/s',
      ofFloor: yardstick / floor,
      note: 'see yardstick.ts',
    },
  ];
  const json: Record<string, unknown> = {
    machine: machine(),
    rows: count,
    floor: { rowsPerSecond: floor },
    yardstick10: { rowsPerSecond: yardstick },
  };
  let trained: Ensemble | null = null;
  for (const { key, name, spec, share, runs } of CASES) {
    const n = Math.max(1000, Math.round(count * share));
    let correct = 0;
    let last: Ensemble | null = null;
    const rate = medianRate(
      n,
      () => {
        last = createEnsemble(spec, schema, `bench-${key}`);
        last.ensureClasses(2);
        correct = prequential(last, values, labels, n, width);
        return correct;
      },
      runs,
      runs > 1 ? 1 : 0,
    );
    const accuracy = correct / n;
    const model = last as Ensemble | null;
    rows.push({
      name,
      rate,
      unit: 'rows/s',
      ofFloor: rate / floor,
      accuracy,
      note: `${n} rows, model ${model?.sizeBytes() ?? 0} bytes`,
    });
    json[key] = { rowsPerSecond: rate, accuracy, rows: n, modelBytes: model?.sizeBytes() ?? 0 };
    if (key === 'bagging10') trained = model;
  }
  const verdict = new Verdict();
  const scoring = trained!;
  const scoreRate = medianRate(count, () => {
    let s = 0;
    for (let i = 0; i < count; i++) {
      scoring.score(values, i * width, verdict);
      s += verdict.predicted;
    }
    return s;
  });
  const scoreYardstick = yardstickRate(values, labels, count, width, false);
  rows.push({
    name: 'yardstick, score only',
    rate: scoreYardstick,
    unit: 'rows/s',
    ofFloor: scoreYardstick / floor,
  });
  json.yardstickScore10 = { rowsPerSecond: scoreYardstick };
  rows.push({
    name: 'score only, trained bagging ×10',
    rate: scoreRate,
    unit: 'rows/s',
    ofFloor: scoreRate / floor,
  });
  json.score10 = { rowsPerSecond: scoreRate };
  return { title: 'Learning core, one thread', rows, json };
};
