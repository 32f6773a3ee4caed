import {
  checkSnapshot,
  defaultsOf,
  deriveSeed,
  type FeatureSchema,
  nonEmptyList,
  numericSchema,
  type OptionsOf,
  type OptionTable,
  oneOf,
  Rng,
  type RngState,
  resolveOptions,
  type Seed,
} from '../core/index.js';
import {
  type ClassifierSpec,
  createClassifier,
  type LearnerSnapshot,
  Logistic,
  type LogisticOptions,
  Mlp,
  type MlpOptions,
} from '../learners/index.js';
import type { EnsembleSnapshot } from './ensemble.js';
import { LIFECYCLE_DEFAULTS, Lifecycle, type LifecycleOptions, type LifecycleSink } from './lifecycle.js';

import { SeatedEnsemble } from './seated-ensemble.js';
import type { Verdict } from './verdict.js';

/**
 * Online stacking (Wolpert, "Stacked generalization", Neural Networks 5, 1992, in its streaming form):
 * heterogeneous members, and a meta-learner that learns from the members' class probabilities which
 * member to trust for which kind of row. Every member is scored on a row before it trains on it, so the
 * outputs the meta-learner trains on are out-of-sample — the streaming counterpart of keeping the base
 * learners' training fold away from the meta-model. With `holdout` > 0 that share of rows (drawn from
 * the ensemble's seed) trains the meta-learner only.
 *
 * When the lifecycle replaces a member, the meta-learner's weights on that seat's inputs are reset, so
 * the new member is not trusted with its predecessor's credit.
 */
export type MetaSpec =
  | ({ readonly kind: 'logistic' } & Partial<LogisticOptions>)
  | ({ readonly kind: 'mlp' } & Partial<MlpOptions>);

/** Stacking's scalar options (see `OptionTable`); members and the meta-learner are specs of their own. */
export const STACKING_OPTIONS = {
  holdout: {
    type: 'number',
    atLeast: 0,
    below: 1,
    default: 0,
    doc: 'share of rows that train the meta-learner only',
  },
} as const satisfies OptionTable;

export type StackingOptions = OptionsOf<typeof STACKING_OPTIONS> & {
  readonly learners: readonly ClassifierSpec[];
  readonly meta: MetaSpec;
  readonly lifecycle: LifecycleOptions;
};

export const STACKING_DEFAULTS: StackingOptions = {
  learners: [
    { kind: 'hoeffding-tree' },
    { kind: 'knn-window' },
    { kind: 'linear-svm' },
    { kind: 'naive-bayes' },
  ],
  meta: { kind: 'logistic' },
  ...defaultsOf(STACKING_OPTIONS),
  lifecycle: LIFECYCLE_DEFAULTS,
};

export type StackingSpec = Partial<Omit<StackingOptions, 'lifecycle'>> & {
  readonly lifecycle?: Partial<LifecycleOptions>;
};

const KIND = 'stacking';
const VERSION = 3;

function resolve(spec: StackingSpec): StackingOptions {
  const o: StackingOptions = {
    ...STACKING_DEFAULTS,
    ...spec,
    lifecycle: { ...LIFECYCLE_DEFAULTS, ...spec.lifecycle },
  };
  nonEmptyList(KIND, 'learners', o.learners);
  oneOf(KIND, 'meta.kind', o.meta?.kind, ['logistic', 'mlp'] as const);
  resolveOptions(KIND, STACKING_OPTIONS, spec, ['kind', 'learners', 'lifecycle', 'meta']);
  return o;
}

type MetaLearner = Logistic | Mlp;

interface StackingState {
  readonly rng: RngState;
  readonly meta: LearnerSnapshot;
}

export class Stacking extends SeatedEnsemble {
  readonly kind = KIND;
  readonly options: StackingOptions;
  private readonly rng: Rng;
  private meta: MetaLearner;
  /** Per seat, 1 when the last row learnt replaced its member. */
  private readonly replaced: Uint8Array;

  constructor(
    schema: FeatureSchema,
    spec: StackingSpec = {},
    seed: Seed = 0,
    journal: LifecycleSink = () => {},
    restored?: EnsembleSnapshot,
  ) {
    const options = resolve(spec);
    const root = String(seed);
    const { learners } = options;
    const lifecycle = new Lifecycle(
      options.lifecycle,
      learners.length,
      (seat, id) => createClassifier(learners[seat]!, schema, deriveSeed(root, 'member', id)),
      journal,
      restored?.lifecycle,
    );
    super(schema, root, lifecycle, VERSION, restored);
    this.options = options;
    const state = restored?.state as StackingState | undefined;
    this.rng = state === undefined ? new Rng(deriveSeed(root, 'holdout')) : Rng.fromState(state.rng);
    const classes = Math.max(1, restored?.lifecycle.classes ?? 1);
    this.meta = state === undefined ? this.freshMeta(classes) : restoreMeta(state.meta);
    this.replaced = new Uint8Array(learners.length);
    this.scratch.fit(classes);
    this.lifecycle.ensureClasses(classes);
  }

  static restore(snapshot: EnsembleSnapshot, journal: LifecycleSink = () => {}): Stacking {
    checkSnapshot(snapshot, KIND, VERSION);
    return new Stacking(snapshot.schema, snapshot.options as StackingSpec, snapshot.seed, journal, snapshot);
  }

  score(row: Float64Array, offset: number, verdict: Verdict): void {
    this.checkRowOnly(row, offset);
    const { probs, preds, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    for (let m = 0; m < seats.length; m++) preds[m] = seats[m]!.member.score(row, offset, probs, m * classes);
    const out = verdict.fit(classes);
    this.finish(this.meta.score(probs, 0, out, 0), verdict);
  }

  /**
   * The meta-learner's inputs are the members' probabilities, so a new class changes its input width:
   * it starts afresh (a rare event — classes appear early in a stream).
   */
  protected override classesGrew(n: number): void {
    this.meta = this.freshMeta(n);
  }

  protected override ownBytes(): number {
    return this.meta.sizeBytes();
  }

  protected state(): StackingState {
    return { rng: this.rng.state(), meta: this.meta.snapshot() };
  }

  protected step(row: Float64Array, offset: number, label: number, verdict: Verdict | null): void {
    const { probs, preds, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    const replaced = this.replaced;
    const holdout = this.options.holdout;
    const weight = holdout > 0 && this.rng.next() < holdout ? 0 : 1;
    let replacements = 0;
    for (let m = 0; m < seats.length; m++) {
      const seat = seats[m]!;
      const predicted = seat.member.scoreTrain(row, offset, label, weight, probs, m * classes);
      preds[m] = predicted;
      this.lifecycle.coach(seat, row, offset, label, weight);
      replaced[m] = this.lifecycle.judge(seat, predicted === label, this.rows) ? 1 : 0;
      replacements += replaced[m]!;
    }
    // The meta-learner learns from the members' out-of-sample outputs; a label of a class appearing
    // now is learnt once the classes have grown. It scores the row as it stood before the label came
    // (the verdict `score` gives), and forgets a replaced seat's inputs only before it learns.
    const known = label < classes;
    if (verdict !== null) {
      const out = verdict.fit(classes);
      if (known && replacements === 0) {
        this.finish(this.meta.scoreTrain(probs, 0, label, 1, out, 0), verdict);
        return;
      }
      this.finish(this.meta.score(probs, 0, out, 0), verdict);
    }
    if (replacements > 0) {
      for (let m = 0; m < seats.length; m++)
        if (replaced[m] === 1) this.meta.forgetInputs(m * classes, classes);
    }
    if (known) this.meta.train(probs, 0, label, 1);
  }

  private finish(predicted: number, verdict: Verdict): void {
    const { preds, members } = this.scratch;
    let agree = 0;
    for (let m = 0; m < members; m++) if (preds[m] === predicted) agree++;
    verdict.predicted = predicted;
    verdict.voters = members;
    verdict.agreement = agree / members;
    verdict.epoch = this.lifecycle.epoch;
  }

  private freshMeta(classes: number): MetaLearner {
    const { kind, ...options } = this.options.meta;
    const schema = numericSchema(this.options.learners.length * classes, 'p');
    const seed = deriveSeed(this.seed, 'meta', classes);
    const meta =
      kind === 'mlp'
        ? new Mlp(schema, options as Partial<MlpOptions>, seed)
        : new Logistic(schema, options as Partial<LogisticOptions>, seed);
    meta.ensureClasses(classes);
    return meta;
  }
}

function restoreMeta(snapshot: LearnerSnapshot): MetaLearner {
  return snapshot.kind === 'mlp' ? Mlp.restore(snapshot) : Logistic.restore(snapshot);
}
