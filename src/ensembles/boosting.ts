import {
  decodeF64,
  deriveSeed,
  encodeF64,
  type FeatureSchema,
  integerAtLeast,
  Rng,
  type RngState,
  type Seed,
  ShoalError,
  samplePoisson,
} from '../core/index.js';
import { type ClassifierSpec, createClassifier } from '../learners/index.js';
import { checkLabel, checkRow } from '../learners/learner.js';
import type { Ensemble, EnsembleSnapshot } from './ensemble.js';
import {
  type JournalSink,
  LIFECYCLE_DEFAULTS,
  Lifecycle,
  type LifecycleOptions,
  type SeatView,
} from './lifecycle.js';
import { checkSnapshotKind, MemberScratch } from './scratch.js';
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
export interface BoostingOptions {
  readonly members: number;
  readonly learners: readonly ClassifierSpec[];
  /** Cap on the Poisson repeat count k of one member on one row. */
  readonly maxRepeats: number;
  readonly lifecycle: LifecycleOptions;
}

export const BOOSTING_DEFAULTS: BoostingOptions = {
  members: 10,
  learners: [{ kind: 'hoeffding-tree' }],
  maxRepeats: 16,
  lifecycle: LIFECYCLE_DEFAULTS,
};

export type BoostingSpec = Partial<Omit<BoostingOptions, 'lifecycle'>> & {
  readonly lifecycle?: Partial<LifecycleOptions>;
};

const KIND = 'boosting';
const VERSION = 1;
/** Error rate used in place of 0 so that a perfect member gets a large, finite vote. */
const MIN_ERROR = 1e-6;

function resolve(spec: BoostingSpec): BoostingOptions {
  const o: BoostingOptions = {
    ...BOOSTING_DEFAULTS,
    ...spec,
    lifecycle: { ...LIFECYCLE_DEFAULTS, ...spec.lifecycle },
  };
  integerAtLeast(KIND, 'members', o.members, 1);
  integerAtLeast(KIND, 'maxRepeats', o.maxRepeats, 1);
  if (!Array.isArray(o.learners) || o.learners.length === 0) {
    throw new ShoalError('invalid-parameter', `${KIND}: learners must list at least one learner spec`);
  }
  return o;
}

interface BoostingState {
  readonly rng: RngState;
  readonly right: string;
  readonly wrong: string;
}

export class Boosting implements Ensemble {
  readonly kind = KIND;
  readonly schema: FeatureSchema;
  readonly options: BoostingOptions;
  private readonly seed: string;
  private readonly lifecycle: Lifecycle;
  private readonly rng: Rng;
  /** λˢᶜ and λˢʷ per seat. */
  private readonly right: Float64Array;
  private readonly wrong: Float64Array;
  private readonly scratch: MemberScratch;
  private probe = new Float64Array(1);
  private readonly width: number;
  rows = 0;

  constructor(
    schema: FeatureSchema,
    spec: BoostingSpec = {},
    seed: Seed = 0,
    journal: JournalSink = () => {},
    restored?: EnsembleSnapshot,
  ) {
    this.schema = schema;
    this.options = resolve(spec);
    this.seed = String(seed);
    this.width = schema.features.length;
    const { learners, members } = this.options;
    this.lifecycle = new Lifecycle(
      this.options.lifecycle,
      members,
      (seat, id) =>
        createClassifier(learners[seat % learners.length]!, schema, deriveSeed(this.seed, 'member', id)),
      journal,
      restored?.lifecycle,
    );
    const state = restored?.state as BoostingState | undefined;
    this.rng = state === undefined ? new Rng(deriveSeed(this.seed, 'poisson')) : Rng.fromState(state.rng);
    this.right = state === undefined ? new Float64Array(members) : decodeF64(state.right, 'boosting right');
    this.wrong = state === undefined ? new Float64Array(members) : decodeF64(state.wrong, 'boosting wrong');
    this.scratch = new MemberScratch(members);
    if (restored !== undefined) this.rows = restored.rows;
    this.ensureClasses(Math.max(1, restored?.lifecycle.classes ?? 1));
  }

  static restore(snapshot: EnsembleSnapshot, journal: JournalSink = () => {}): Boosting {
    checkSnapshotKind(snapshot, KIND, VERSION);
    return new Boosting(snapshot.schema, snapshot.options as BoostingSpec, snapshot.seed, journal, snapshot);
  }

  get classes(): number {
    return this.scratch.classes;
  }

  get epoch(): number {
    return this.lifecycle.epoch;
  }

  ensureClasses(n: number): void {
    if (n <= this.scratch.classes) return;
    this.lifecycle.ensureClasses(n);
    this.scratch.fit(n);
    this.probe = new Float64Array(n);
  }

  /** εₘ of a seat, the weighted share of rows it got wrong. */
  errorOf(seat: number): number {
    const total = this.right[seat]! + this.wrong[seat]!;
    return total > 0 ? this.wrong[seat]! / total : 0.5;
  }

  score(row: Float64Array, offset: number, verdict: Verdict): void {
    checkRow(KIND, row, offset, this.width);
    const { probs, preds, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    for (let m = 0; m < seats.length; m++) preds[m] = seats[m]!.member.score(row, offset, probs, m * classes);
    this.vote(verdict);
  }

  train(row: Float64Array, offset: number, label: number): void {
    this.step(row, offset, label, null);
  }

  scoreTrain(row: Float64Array, offset: number, label: number, verdict: Verdict): void {
    this.step(row, offset, label, verdict);
  }

  seats(): SeatView[] {
    return this.lifecycle.view();
  }

  sizeBytes(): number {
    let bytes = 0;
    for (const seat of this.lifecycle.seats)
      bytes += seat.member.sizeBytes() + (seat.understudy?.sizeBytes() ?? 0);
    return bytes;
  }

  snapshot(): EnsembleSnapshot {
    const state: BoostingState = {
      rng: this.rng.state(),
      right: encodeF64(this.right),
      wrong: encodeF64(this.wrong),
    };
    return {
      kind: KIND,
      version: VERSION,
      schema: this.schema,
      options: { ...this.options },
      seed: this.seed,
      rows: this.rows,
      lifecycle: this.lifecycle.snapshot(),
      state,
    };
  }

  private step(row: Float64Array, offset: number, label: number, verdict: Verdict | null): void {
    checkRow(KIND, row, offset, this.width);
    checkLabel(KIND, label);
    const { probs, preds, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    const cap = this.options.maxRepeats;
    let lambda = 1;
    for (let m = 0; m < seats.length; m++) {
      const seat = seats[m]!;
      const k = Math.min(cap, samplePoisson(this.rng, lambda));
      const before = seat.member.scoreTrain(row, offset, label, k, probs, m * classes);
      preds[m] = before;
      if (seat.understudy !== null) seat.understudy.train(row, offset, label, k);
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
    this.rows++;
    if (label >= classes) this.ensureClasses(label + 1);
  }

  /** Weighted hard vote: log((1 − ε)/ε) for members with ε < 0.5 that are not warming. */
  private vote(verdict: Verdict): void {
    const { probs, preds, weights, classes } = this.scratch;
    const seats = this.lifecycle.seats;
    for (let m = 0; m < seats.length; m++) {
      const e = this.errorOf(m);
      weights[m] =
        e < 0.5 && this.lifecycle.votes(seats[m]!) ? Math.log((1 - e) / Math.max(MIN_ERROR, e)) : 0;
    }
    combineVotes(true, probs, preds, weights, seats.length, classes, verdict);
    verdict.epoch = this.lifecycle.epoch;
  }
}
