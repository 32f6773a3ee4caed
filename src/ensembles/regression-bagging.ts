import {
  type ConfiguredSnapshot,
  checkSnapshot,
  defaultsOf,
  deriveSeed,
  type FeatureSchema,
  nonEmptyList,
  type OptionsOf,
  type OptionTable,
  PoissonSampler,
  Rng,
  type RngState,
  resolveOptions,
  type Seed,
  ShoalError,
} from '../core/index.js';
import {
  checkRow,
  checkTarget,
  createRegressor,
  type LearnerSnapshot,
  type Regressor,
  type RegressorSpec,
  restoreRegressor,
} from '../learners/index.js';
import type { SeatView } from './lifecycle.js';
import type { Verdict } from './verdict.js';

/** Regression bagging's scalar options (see `OptionTable`). */
export const REGRESSION_BAGGING_OPTIONS = {
  members: { type: 'integer', atLeast: 1, default: 10, doc: 'members whose mean is the prediction' },
  lambda: { type: 'number', atLeast: 0, default: 1, doc: 'λ, the Poisson rate of the training weights' },
} as const satisfies OptionTable;

export type RegressionBaggingOptions = OptionsOf<typeof REGRESSION_BAGGING_OPTIONS> & {
  readonly learners: readonly RegressorSpec[];
};

export const REGRESSION_BAGGING_DEFAULTS: RegressionBaggingOptions = {
  ...defaultsOf(REGRESSION_BAGGING_OPTIONS),
  learners: [{ kind: 'hoeffding-regression-tree' }],
};

const KIND = 'regression-bagging';
const VERSION = 2;

interface RegressionBaggingState {
  readonly rows: number;
  readonly members: readonly LearnerSnapshot[];
  readonly poisson: readonly RngState[];
}

/** The shared snapshot envelope, with the schema the bag reads and its members and generators as state. */
export interface RegressionBaggingSnapshot extends ConfiguredSnapshot<RegressionBaggingState> {
  readonly schema: FeatureSchema;
}

/**
 * Online bagging for regression (Oza & Russell 2001, with regressors as members): each member trains
 * on each row with a weight k ~ Poisson(λ); the ensemble predicts the members' mean. Members are not
 * monitored: the member lifecycle judges 0/1 errors, which regression does not have, so there are no
 * seats to watch and the model epoch stays 0. It scores into the same reused `Verdict` as the
 * classification ensembles (its `value`; no classes), so a session drives either alike.
 *
 * @example
 * const bag = new RegressionBagging(schema, { members: 10 }, 7);
 * const verdict = new Verdict();
 * bag.scoreTrain(rows, i * width, target, verdict); // verdict.value: the prediction made before training
 */
export class RegressionBagging {
  readonly kind = KIND;
  readonly schema: FeatureSchema;
  /** A regression has no classes. */
  readonly classes = 0;
  /** No seat is ever replaced. */
  readonly epoch = 0;
  /** Rows trained on so far. */
  rows = 0;
  readonly options: RegressionBaggingOptions;
  private readonly members: Regressor[];
  private readonly poisson: Rng[];
  private readonly sampler: PoissonSampler;
  private readonly width: number;

  constructor(schema: FeatureSchema, options: Partial<RegressionBaggingOptions> = {}, seed: Seed = 0) {
    this.schema = schema;
    this.options = { ...REGRESSION_BAGGING_DEFAULTS, ...options };
    const { members, learners, lambda } = this.options;
    resolveOptions(KIND, REGRESSION_BAGGING_OPTIONS, options, ['kind', 'learners']);
    nonEmptyList(KIND, 'learners', learners);
    this.width = schema.features.length;
    this.members = Array.from({ length: members }, (_, i) =>
      createRegressor(learners[i % learners.length]!, schema, deriveSeed(seed, 'member', i)),
    );
    this.poisson = Array.from({ length: members }, (_, i) => new Rng(deriveSeed(seed, 'poisson', i)));
    this.sampler = new PoissonSampler(lambda);
  }

  static restore(snapshot: RegressionBaggingSnapshot): RegressionBagging {
    checkSnapshot(snapshot, KIND, VERSION);
    const bag = new RegressionBagging(snapshot.schema, snapshot.options as Partial<RegressionBaggingOptions>);
    const { rows, members, poisson } = snapshot.state;
    if (
      !(Number.isInteger(rows) && rows >= 0) ||
      !Array.isArray(members) ||
      !Array.isArray(poisson) ||
      members.length !== bag.members.length
    ) {
      throw new ShoalError(
        'invalid-snapshot',
        `${KIND} state: expected a count of rows and ${bag.members.length} members`,
      );
    }
    bag.rows = rows;
    members.forEach((m, i) => {
      bag.members[i] = restoreRegressor(m);
      bag.poisson[i] = Rng.fromState(poisson[i]!);
    });
    return bag;
  }

  /** A regression has no classes to announce: nothing changes. */
  ensureClasses(_n: number): void {}

  /** The members' mean prediction into `verdict.value`; every member votes. */
  score(row: Float64Array, offset: number, verdict: Verdict): void {
    checkRow(KIND, row, offset, this.width);
    let sum = 0;
    for (const m of this.members) sum += m.predict(row, offset);
    verdict.fit(0);
    verdict.value = sum / this.members.length;
    verdict.predicted = -1;
    verdict.agreement = Number.NaN;
    verdict.voters = this.members.length;
    verdict.epoch = 0;
  }

  /** Train every member on the row with its own Poisson weight. */
  train(row: Float64Array, offset: number, target: number): void {
    checkRow(KIND, row, offset, this.width);
    checkTarget(KIND, target);
    for (let i = 0; i < this.members.length; i++) {
      const k = this.sampler.sample(this.poisson[i]!);
      if (k > 0) this.members[i]!.train(row, offset, target, k);
    }
    this.rows++;
  }

  /** Score, then train: the prequential step (the verdict never saw the target). */
  scoreTrain(row: Float64Array, offset: number, target: number, verdict: Verdict): void {
    checkTarget(KIND, target);
    this.score(row, offset, verdict);
    this.train(row, offset, target);
  }

  /** Members hold no seats: nothing watches them (see the class comment). */
  seats(): SeatView[] {
    return [];
  }

  sizeBytes(): number {
    return this.members.reduce((a, m) => a + m.sizeBytes(), 0);
  }

  snapshot(): RegressionBaggingSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      schema: this.schema,
      options: { ...this.options },
      state: {
        rows: this.rows,
        members: this.members.map((m) => m.snapshot()),
        poisson: this.poisson.map((r) => r.state()),
      },
    };
  }
}
