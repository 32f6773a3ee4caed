import { numericSchema } from '../../src/core/index.js';
import { createEnsemble, type Ensemble, type EnsembleSpec, Verdict } from '../../src/ensembles/index.js';
import { type BenchFn, type BenchRow, floorRate, machine, medianRate, pairedRates } from './harness.js';
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
 * It is timed in turns with `bagging10` (and the scoring yardstick with `score10`), five pairs, and
 * `ofYardstick` is the median of the pairs' ratios (see `pairedRates`): the host is a shared VM whose
 * speed drifts by a third within minutes, and a ratio of rates taken minutes apart drifted with it.
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

/** Times a case: in turns with the yardstick when `yardstick` is given, else on its own. */
function timeCase(
  n: number,
  body: () => number,
  runs: number,
  yardstick: (() => number) | null,
): { rate: number; reference?: number; ratio?: number } {
  if (yardstick === null) return { rate: medianRate(n, body, runs, runs > 1 ? 1 : 0) };
  return pairedRates(n, yardstick, body);
}

export const bench: BenchFn = ({ quick }) => {
  const count = quick ? 50_000 : 1_000_000;
  const { rows: values, labels, width } = benchStream(count, 'bench-core');
  const schema = numericSchema(width);
  const floor = floorRate(values, count);
  const rows: BenchRow[] = [
    { name: 'floor (bare loop, 10-feature rows)', rate: floor, unit: 'rows/s', ofFloor: 1 },
  ];
  const json: Record<string, unknown> = { machine: machine(), rows: count, floor: { rowsPerSecond: floor } };
  const yardstickRow = (name: string, key: string, rate: number): void => {
    rows.push({
      name,
      rate,
      unit: 'rows/s',
      ofFloor: rate / floor,
      note: 'see yardstick.ts; timed in turns with the row below',
    });
    json[key] = { rowsPerSecond: rate };
  };
  let trained: Ensemble | null = null;
  for (const { key, name, spec, share, runs } of CASES) {
    const n = Math.max(1000, Math.round(count * share));
    let correct = 0;
    let last: Ensemble | null = null;
    const paired = key === 'bagging10' ? yardstickRun(values, labels, n, width, true) : null;
    const { rate, reference, ratio } = timeCase(
      n,
      () => {
        last = createEnsemble(spec, schema, `bench-${key}`);
        last.ensureClasses(2);
        correct = prequential(last, values, labels, n, width);
        return correct;
      },
      runs,
      paired,
    );
    if (reference !== undefined)
      yardstickRow('yardstick: 10 fixed trees, NB + Welford only', 'yardstick10', reference);
    const accuracy = correct / n;
    const model = last as Ensemble | null;
    const bytes = model?.sizeBytes() ?? 0;
    const of = ratio === undefined ? '' : `, ${ratio.toFixed(3)}× the yardstick (paired)`;
    rows.push({
      name,
      rate,
      unit: 'rows/s',
      ofFloor: rate / floor,
      accuracy,
      note: `${n} rows, model ${bytes} bytes${of}`,
    });
    json[key] = {
      rowsPerSecond: rate,
      accuracy,
      rows: n,
      modelBytes: bytes,
      ...(ratio === undefined ? {} : { ofYardstick: ratio }),
    };
    if (key === 'bagging10') trained = model;
  }
  const verdict = new Verdict();
  const scoring = trained!;
  const scored = pairedRates(count, yardstickRun(values, labels, count, width, false), () => {
    let s = 0;
    for (let i = 0; i < count; i++) {
      scoring.score(values, i * width, verdict);
      s += verdict.predicted;
    }
    return s;
  });
  yardstickRow('yardstick, score only', 'yardstickScore10', scored.reference);
  rows.push({
    name: 'score only, trained bagging ×10',
    rate: scored.rate,
    unit: 'rows/s',
    ofFloor: scored.rate / floor,
    note: `${scored.ratio.toFixed(3)}× the scoring yardstick (paired)`,
  });
  json.score10 = { rowsPerSecond: scored.rate, ofYardstick: scored.ratio };
  return { title: 'Learning core, one thread', rows, json };
};
