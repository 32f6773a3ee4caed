import { numericSchema } from '../../src/core/index.js';
import { createEnsemble, type Ensemble, type EnsembleSpec, Verdict } from '../../src/ensembles/index.js';
import {
  type BenchFn,
  type BenchRow,
  floorRate,
  machine,
  median,
  medianRate,
  roundRates,
  roundRatio,
} from './harness.js';
import { benchStream } from './stream.js';
import { yardstickRun } from './yardstick.js';

/**
 * The learning core, one thread: prequential rows per second (score the row, then train on it) of
 * ensembles on the 10-feature, 2-class stream of `stream.ts`, with the prequential accuracy beside each
 * speed so that speed never hides a loss of quality (the stream's Bayes bound is 90%). Each timed run
 * builds a fresh ensemble, so a rate includes the early rows. `score10` times scoring alone with the
 * 10-member bagging trained on the whole stream.
 *
 * `yardstick10` is the same work stripped to its arithmetic (see `yardstick.ts`): what this machine allows.
 * The yardstick and the cases are timed in rounds, each round timing every one of them once (see
 * `roundRates`), and the ratios the targets name — bagging ×10 to the yardstick, ×30 and the default to
 * ×10 — are medians of the rounds' ratios (`ofYardstick`, `ofBagging10`); score-only ×10 and its
 * yardstick take turns the same way, over five rounds. The host is a shared VM whose speed drifts by a
 * third within minutes: a ratio of two rates timed minutes apart drifted with it.
 * `bagging10small` is `bagging10` with a quarter of the default byte cap per tree (the default's ten trees
 * fit a 2 MiB L2 since leaf statistics are single precision; this one's fit far smaller caches).
 * `bagging10` and `bagging30` are classic online bagging (Oza & Russell: λ = 1, no lifecycle) of
 * Hoeffding trees with naive-Bayes-adaptive leaves; `default10` is what `shoal replay` runs without a
 * configuration (λ = 6 and an ADWIN monitor per member).
 */
const PLAIN = { lifecycle: { enabled: false } } as const;

/** A quarter of the default byte cap per tree (128 KiB). */
const SMALL_CAP = 32 * 1024;

const CASES: readonly { key: string; name: string; spec: EnsembleSpec }[] = [
  {
    key: 'tree1',
    name: 'one Hoeffding tree',
    spec: { kind: 'bagging', members: 1, lambda: 1, ...PLAIN },
  },
  {
    key: 'bagging10',
    name: 'bagging ×10 (λ = 1)',
    spec: { kind: 'bagging', members: 10, lambda: 1, ...PLAIN },
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
  },
  {
    key: 'bagging30',
    name: 'bagging ×30 (λ = 1)',
    spec: { kind: 'bagging', members: 30, lambda: 1, ...PLAIN },
  },
  {
    key: 'boosting10',
    name: 'boosting ×10',
    spec: { kind: 'boosting', members: 10, ...PLAIN },
  },
  {
    key: 'default10',
    name: 'default: bagging ×10, λ = 6, ADWIN lifecycle',
    spec: { kind: 'bagging' },
  },
];

/** Stacking is slow (its kNN member above all): timed once over a twentieth of the rows, after the rounds. */
const STACKING = { key: 'stacking', name: 'stacking (tree, kNN, SVM, NB; logistic meta)', share: 0.05 };

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

/** Rounds of the cases, after one untimed round; five for scoring, which is quicker. */
const ROUNDS = 3;
const SCORE_ROUNDS = 5;

/** Each key's ratio to another case's, as a median of the rounds' ratios, and the JSON field naming it. */
const RATIOS: Readonly<Record<string, { of: string; field: string; say: string }>> = {
  bagging10: { of: 'yardstick10', field: 'ofYardstick', say: 'the yardstick' },
  bagging30: { of: 'bagging10', field: 'ofBagging10', say: 'bagging ×10' },
  default10: { of: 'bagging10', field: 'ofBagging10', say: 'bagging ×10' },
};

export const bench: BenchFn = ({ quick }) => {
  const count = quick ? 50_000 : 1_000_000;
  const { rows: values, labels, width } = benchStream(count, 'bench-core');
  const schema = numericSchema(width);
  const floor = floorRate(values, count);
  const rows: BenchRow[] = [
    { name: 'floor (bare loop, 10-feature rows)', rate: floor, unit: 'rows/s', ofFloor: 1 },
  ];
  const json: Record<string, unknown> = { machine: machine(), rows: count, floor: { rowsPerSecond: floor } };
  const outcome = new Map<string, { correct: number; model: Ensemble }>();
  const run = (key: string, spec: EnsembleSpec, n: number) => (): number => {
    const model = createEnsemble(spec, schema, `bench-${key}`);
    model.ensureClasses(2);
    const correct = prequential(model, values, labels, n, width);
    outcome.set(key, { correct, model });
    return correct;
  };
  const keys = ['yardstick10', ...CASES.map((c) => c.key)];
  const rates = roundRates(
    keys.map(() => count),
    [yardstickRun(values, labels, count, width, true), ...CASES.map((c) => run(c.key, c.spec, count))],
    ROUNDS,
  );
  const rateOf = new Map(keys.map((k, i) => [k, rates[i]!]));
  rows.push({
    name: 'yardstick: 10 fixed trees, NB + Welford only',
    rate: median(rates[0]!),
    unit: 'rows/s',
    ofFloor: median(rates[0]!) / floor,
    note: 'see yardstick.ts',
  });
  json.yardstick10 = { rowsPerSecond: median(rates[0]!) };
  for (const { key, name } of CASES) {
    const rate = median(rateOf.get(key)!);
    const { correct, model } = outcome.get(key)!;
    const accuracy = correct / count;
    const bytes = model.sizeBytes();
    const of = RATIOS[key];
    const ratio = of === undefined ? null : roundRatio(rateOf.get(key)!, rateOf.get(of.of)!);
    rows.push({
      name,
      rate,
      unit: 'rows/s',
      ofFloor: rate / floor,
      accuracy,
      note: `${count} rows, model ${bytes} bytes${of === undefined ? '' : `, ${ratio!.toFixed(3)}× ${of.say} (rounds' median)`}`,
    });
    json[key] = {
      rowsPerSecond: rate,
      accuracy,
      rows: count,
      modelBytes: bytes,
      ...(of === undefined ? {} : { [of.field]: ratio }),
    };
  }
  const stackRows = Math.max(1000, Math.round(count * STACKING.share));
  const stackRate = medianRate(stackRows, run(STACKING.key, { kind: 'stacking', ...PLAIN }, stackRows), 1, 0);
  const stacked = outcome.get(STACKING.key)!;
  rows.push({
    name: STACKING.name,
    rate: stackRate,
    unit: 'rows/s',
    ofFloor: stackRate / floor,
    accuracy: stacked.correct / stackRows,
    note: `${stackRows} rows, model ${stacked.model.sizeBytes()} bytes`,
  });
  json[STACKING.key] = {
    rowsPerSecond: stackRate,
    accuracy: stacked.correct / stackRows,
    rows: stackRows,
    modelBytes: stacked.model.sizeBytes(),
  };
  const verdict = new Verdict();
  const scoring = outcome.get('bagging10')!.model;
  const [yardScore, score] = roundRates(
    [count, count],
    [
      yardstickRun(values, labels, count, width, false),
      () => {
        let s = 0;
        for (let i = 0; i < count; i++) {
          scoring.score(values, i * width, verdict);
          s += verdict.predicted;
        }
        return s;
      },
    ],
    SCORE_ROUNDS,
  ) as [number[], number[]];
  const scoreRatio = roundRatio(score, yardScore);
  rows.push({
    name: 'yardstick, score only',
    rate: median(yardScore),
    unit: 'rows/s',
    ofFloor: median(yardScore) / floor,
  });
  json.yardstickScore10 = { rowsPerSecond: median(yardScore) };
  rows.push({
    name: 'score only, trained bagging ×10',
    rate: median(score),
    unit: 'rows/s',
    ofFloor: median(score) / floor,
    note: `${scoreRatio.toFixed(3)}× the scoring yardstick (rounds' median)`,
  });
  json.score10 = { rowsPerSecond: median(score), ofYardstick: scoreRatio };
  return { title: 'Learning core, one thread', rows, json };
};
