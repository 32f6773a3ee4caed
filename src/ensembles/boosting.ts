import {
  checkSnapshot,
  decodeF64,
  defaultsOf,
  deriveSeed,
  encodeF64,
  type FeatureSchema,
  nonEmptyList,
  type OptionsOf,
  type OptionTable,
  Rng,
  type RngState,
  resolveOptions,
  type Seed,
  samplePoisson,
} from '../core/index.js';
import { type ClassifierSpec, createClassifier } from '../learners/index.js';
import type { EnsembleSnapshot } from './ensemble.js';
import { LIFECYCLE_DEFAULTS, Lifecycle, type LifecycleOptions, type LifecycleSink } from './lifecycle.js';

import { SeatedEnsemble } from './seated-ensemble.js';
import type { Verdict } from './verdict.js';
import { combineVotes } from './vote.js';

/**
 * Online boosting — Oza & Russell, "Online bagging and boosting", AISTATS 2001 (online AdaBoost.M1).
 * A row enters with weight λ = 1 and passes the members in order. Member m trains on it
 * k ~ Poisson(λ) times (capped at `maxRepeats` to bound the cost of a hard row); then, judged on the
 * row after training:
 *   right: λˢᶜₘ += λ,  λ ← λ / (2(1 − εₘ));   wrong: λˢʷₘ += λ,  λ ← λ / (2εₘ);   εₘ = λˢʷₘ / (λˢᶜₘ + λˢʷₘ),
 * so rows the earlier members get wrong weigh more for the later ones. (With N = λˢᶜ + λˢʷ the updates
 * are PUBLISHED.md's λ·N/(2λˢᶜ) and λ·N/(2λˢʷ).) Members vote with weight log((1 − εₘ)/εₘ); a member
 * with εₘ ≥ 0.5 does not vote. When the lifecycle replaces a member, its seat's λˢᶜ and λˢʷ restart.
 */
/** Boosting's scalar options (see `OptionTable`). */
export const BOOSTING_OPTIONS = {
  members: { type: 'integer', atLeast: 1, default: 10, doc: 'seats of the ensemble, in boosting order' },
  maxRepeats: {
    type: 'integer',
    atLeast: 1,
    default: 16,
    doc: 'cap on the Poisson repeat count of one member on one row',
  },
} as const satisfies OptionTable;

export type BoostingOptions = OptionsOf<typeof BOOSTING_OPTIONS> & {
  readonly learners: readonly ClassifierSpec[];
  readonly lifecycle: LifecycleOptions;
};

export const BOOSTING_DEFAULTS: BoostingOptions = {
  ...defaultsOf(BOOSTING_OPTIONS),
  learners: [{ kind: 'hoeffding-tree' }],
  lifecycle: LIFECYCLE_DEFAULTS,
};

export type BoostingSpec = Partial<Omit<BoostingOptions, 'lifecycle'>> & {
  readonly lifecycle?: Partial<LifecycleOptions>;
};

const KIND = 'boosting';
const VERSION = 3;
/** Error rate used in place of 0 so that a perfect member gets a large, finite vote. */
const MIN_ERROR = 1e-6;

function resolve(spec: BoostingSpec): BoostingOptions {
  const o: BoostingOptions = {
    ...BOOSTING_DEFAULTS,
    ...spec,
    lifecycle: { ...LIFECYCLE_DEFAULTS, ...spec.lifecycle },
  };
  resolveOptions(KIND, BOOSTING_OPTIONS, spec, ['kind', 'learners', 'lifecycle', 'meta']);
  nonEmptyList(KIND, 'learners', o.learners);
  return o;
}

interface BoostingState {
  readonly rng: RngState;
  readonly right: string;
  readonly wrong: string;
}

export class Boosting extends SeatedEnsemble {
  readonly kind = KIND;
  readonly options: BoostingOptions;
  private readonly rng: Rng;
  /** λˢᶜ and λˢʷ per seat. */
  private readonly right: Float64Array;
  private readonly wrong: Float64Array;
  private probe = new Float64Array(1);

  constructor(
    schema: FeatureSchema,
    spec: BoostingSpec = {},
    seed: Seed = 0,
    journal: LifecycleSink = () => {},
    restored?: EnsembleSnapshot,
  ) {
    const options = resolve(spec);
    const root = String(seed);
    const { learners, members } = options;
    const lifecycle = new Lifecycle(
      options.lifecycle,
      members,
      (seat, id) =>
        createClassifier(learners[seat % learners.length]!, schema, deriveSeed(root, 'member', id)),
      journal,
      restored?.lifecycle,
    );
    super(schema, root, lifecycle, VERSION, restored);
    this.options = options;
    const state = restored?.state as BoostingState | undefined;
    this.rng = state === undefined ? new Rng(deriveSeed(root, 'poisson')) : Rng.fromState(state.rng);
    this.right = state === undefined ? new Float64Array(members) : decodeF64(state.right, 'boosting right');
    this.wrong = state === undefined ? new Float64Array(members) : decodeF64(state.wrong, 'boosting wrong');
    this.ensureClasses(Math.max(1, restored?.lifecycle.classes ?? 1));
  }

  static restore(snapshot: EnsembleSnapshot, journal: LifecycleSink = () => {}): Boosting {
    checkSnapshot(snapshot, KIND, VERSION);
    return new Boosting(snapshot.schema, snapshot.options as BoostingSpec, snapshot.seed, journal, snapshot);
  }

  /** εₘ of a seat, the weighted share of rows it got wrong. */
  errorOf(seat: number): number {
    const total = this.right[seat]! + this.wrong[seat]!;
    return total > 0 ? this.wrong[seat]! / total : 0.5;
  }

  score(row: Float64Array, offset: number, verdict: Verdict): void {
    this.checkRowOnly(row, offset);
    const { probs, preds, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    for (let m = 0; m < seats.length; m++) preds[m] = seats[m]!.member.score(row, offset, probs, m * classes);
    this.weigh();
    this.vote(verdict);
  }

  protected state(): BoostingState {
    return { rng: this.rng.state(), right: encodeF64(this.right), wrong: encodeF64(this.wrong) };
  }

  protected step(row: Float64Array, offset: number, label: number, verdict: Verdict | null): void {
    const { probs, preds, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    const cap = this.options.maxRepeats;
    // The vote weights are those the members had before this row's label was known: the same
    // verdict as `score` gives when the label comes later.
    if (verdict !== null) this.weigh();
    // A member that has just learnt a new class answers with one more probability than the ensemble knows.
    const answers = label < classes ? classes : label + 1;
    if (this.probe.length < answers) this.probe = new Float64Array(answers);
    let lambda = 1;
    for (let m = 0; m < seats.length; m++) {
      const seat = seats[m]!;
      const k = Math.min(cap, samplePoisson(this.rng, lambda));
      const before = seat.member.scoreTrain(row, offset, label, k, probs, m * classes);
      preds[m] = before;
      // Boosting votes one-hot, so the member's answer gives the true class 1 or 0.
      seat.calibrate(before === label ? 1 : 0, classes);
      this.lifecycle.coach(seat, row, offset, label, k);
      if (this.lifecycle.judge(seat, before === label, this.rows)) {
        this.right[m] = 0;
        this.wrong[m] = 0;
      }
      const after = k > 0 ? seat.member.score(row, offset, this.probe, 0) : before;
      if (after === label) {
        this.right[m]! += lambda;
        lambda /= 2 * (1 - this.errorOf(m));
      } else {
        this.wrong[m]! += lambda;
        lambda /= 2 * Math.max(MIN_ERROR, this.errorOf(m));
      }
    }
    if (verdict !== null) this.vote(verdict);
  }

  /** Vote weights: log((1 − ε)/ε) for members with ε < 0.5 that are not warming, 0 for the others. */
  private weigh(): void {
    const { weights, confidence } = this.scratch;
    const seats = this.lifecycle.seats;
    for (let m = 0; m < seats.length; m++) {
      const e = this.errorOf(m);
      weights[m] =
        e < 0.5 && this.lifecycle.votes(seats[m]!) ? Math.log((1 - e) / Math.max(MIN_ERROR, e)) : 0;
      confidence[m] = seats[m]!.trust;
    }
  }

  /**
   * Weighted hard vote of the members' predictions with the weights `weigh` set: the probabilities are
   * the normalised vote weights, each member's vote shrunk towards uniform by its recent accuracy (see
   * vote.ts), so that no class gets probability 0 when some member could be wrong.
   */
  private vote(verdict: Verdict): void {
    combineVotes(true, this.voteParts, this.voteCounts, verdict);
    verdict.epoch = this.lifecycle.epoch;
  }
}
