import {
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
} from '../core/index.js';
import { type ClassifierSpec, createClassifier, TreeForest } from '../learners/index.js';
import type { EnsembleSnapshot } from './ensemble.js';
import {
  LIFECYCLE_DEFAULTS,
  Lifecycle,
  type LifecycleOptions,
  type LifecycleSink,
  type Seat,
  type SeatLedger,
} from './lifecycle.js';

import type { PlacedAnswers } from './scratch.js';
import { SeatedEnsemble } from './seated-ensemble.js';
import type { Verdict } from './verdict.js';
import { combineVotes } from './vote.js';

/**
 * Online bagging — Oza & Russell, "Online bagging and boosting", AISTATS 2001: each member trains on
 * each row k ~ Poisson(λ) times (here: once, with weight k, which gives every learner in Shoal the same
 * sufficient statistics). λ = 1 is classic online bagging, the streaming limit of the bootstrap
 * (Binomial(N, 1/N) → Poisson(1)); larger λ (6 in leveraging bagging, Bifet, Holmes & Pfahringer,
 * ECML PKDD 2010) resamples harder. Members may be of one kind or several (`learners` is cycled over
 * the seats); a Hoeffding tree with `featureSubset` > 0 gives forest-style members.
 *
 * Each seat draws its Poisson weights from its own generator, so members are independent: splitting
 * them across threads gives the same model as one thread.
 */
/**
 * Bagging's scalar options (see `OptionTable`). λ = 6 by default: the leveraging-style weight of Bifet,
 * Holmes & Pfahringer (2010) and of adaptive random forests, which lets trees grow several times faster
 * than λ = 1 after a member is replaced; on SEA with three abrupt changes it is worth about a point of
 * accuracy (see test/ensembles/bagging.test.ts).
 */
export const BAGGING_OPTIONS = {
  members: { type: 'integer', atLeast: 1, default: 10, doc: 'seats of the ensemble' },
  lambda: { type: 'number', atLeast: 0, default: 6, doc: 'λ, the Poisson rate of the training weights' },
  vote: {
    type: 'choice',
    choices: ['hard', 'soft', 'weighted'],
    default: 'soft',
    doc: 'how members vote: one vote each, class probabilities, or probabilities by recent accuracy',
  },
} as const satisfies OptionTable;

export type BaggingOptions = OptionsOf<typeof BAGGING_OPTIONS> & {
  /** Learner specs, cycled over the seats. */
  readonly learners: readonly ClassifierSpec[];
  readonly lifecycle: LifecycleOptions;
};

/**
 * The split confidence δ of the default ensemble's trees: 0.01, that of the trees of adaptive random
 * forests (Gomes et al., Machine Learning 106, 2017, from memory), where each member also trains with
 * Poisson(6) weights, rather than the 1e-7 of a single Hoeffding tree (Domingos & Hulten 2000). A
 * member's errors are averaged with nine others', so it can afford splits on less evidence; on wide,
 * many-class data the trees then grow where 1e-7 kept them near naive Bayes: LetterRecognition 0.783 →
 * 0.814, Satellite 0.816 → 0.859, Vehicle 0.480 → 0.579 (test/ensembles/real-data.test.ts).
 */
const MEMBER_SPLIT_CONFIDENCE = 0.01;

/**
 * The default is leveraging bagging (Bifet, Holmes & Pfahringer, "Leveraging bagging for evolving data
 * streams", ECML PKDD 2010), not Oza & Russell's plain online bagging: Poisson weights of λ = 6 and an
 * ADWIN change detector per member that replaces the member it flags (here with an understudy trained
 * in its shadow, and without the paper's random output codes). λ = 6 lets trees grow several times
 * faster than λ = 1 after a member is replaced; on SEA with three abrupt changes it is worth about a
 * point of accuracy (see test/ensembles/bagging.test.ts). `lambda: 1` with the lifecycle off is Oza &
 * Russell's online bagging.
 */
export const BAGGING_DEFAULTS: BaggingOptions = {
  ...defaultsOf(BAGGING_OPTIONS),
  learners: [{ kind: 'hoeffding-tree', hoeffdingDelta: MEMBER_SPLIT_CONFIDENCE }],
  lifecycle: LIFECYCLE_DEFAULTS,
};

const KIND = 'bagging';
const VERSION = 3;

export type BaggingSpec = Partial<Omit<BaggingOptions, 'lifecycle'>> & {
  readonly lifecycle?: Partial<LifecycleOptions>;
};

function resolve(spec: BaggingSpec): BaggingOptions {
  const o: BaggingOptions = {
    ...BAGGING_DEFAULTS,
    ...spec,
    lifecycle: { ...LIFECYCLE_DEFAULTS, ...spec.lifecycle },
  };
  resolveOptions(KIND, BAGGING_OPTIONS, spec, ['kind', 'learners', 'lifecycle', 'meta']);
  nonEmptyList(KIND, 'learners', o.learners);
  return o;
}

interface BaggingState {
  readonly poisson: readonly RngState[];
}

export class Bagging extends SeatedEnsemble {
  readonly kind = KIND;
  readonly options: BaggingOptions;
  private readonly sampler: PoissonSampler;
  private readonly poisson: Rng[];
  private readonly hard: boolean;
  /** Walks tree members together, level by level (see `TreeForest`). */
  private readonly forest = new TreeForest();
  /** The Poisson weight each seat drew for the last row trained (for audits and tests). */
  readonly draws: Int32Array;

  /**
   * `firstSeat` > 0 builds seats `firstSeat` … `firstSeat + members − 1` of a larger ensemble (a shard
   * for another thread): their members and Poisson generators are seeded as in the whole ensemble, and
   * the shards share a `ledger` of the replacement cap (see `SeatLedger`).
   */
  constructor(
    schema: FeatureSchema,
    spec: BaggingSpec = {},
    seed: Seed = 0,
    journal: LifecycleSink = () => {},
    restored?: EnsembleSnapshot,
    firstSeat = 0,
    ledger?: SeatLedger,
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
      firstSeat,
      ledger,
    );
    super(schema, root, lifecycle, VERSION, restored);
    this.options = options;
    this.sampler = new PoissonSampler(options.lambda);
    const state = restored?.state as BaggingState | undefined;
    this.poisson = Array.from({ length: members }, (_, i) =>
      state === undefined
        ? new Rng(deriveSeed(root, 'poisson', firstSeat + i))
        : Rng.fromState(state.poisson[i]!),
    );
    this.draws = new Int32Array(members);
    this.hard = options.vote === 'hard';
    this.ensureClasses(Math.max(1, restored?.lifecycle.classes ?? 1));
  }

  static restore(snapshot: EnsembleSnapshot, journal: LifecycleSink = () => {}): Bagging {
    checkSnapshot(snapshot, KIND, VERSION);
    return new Bagging(snapshot.schema, snapshot.options as BaggingSpec, snapshot.seed, journal, snapshot);
  }

  /**
   * Write the members' answers to the rows scored or trained from now on into `target` (see
   * `MemberAnswers`; and each seat's recent accuracy after the row), `stride` slots a member, each row's
   * from the slot `answerAt` last named: a worker thread's shard answers straight into shared memory.
   * `stride` must hold every class the rows will bring.
   */
  answerInto(target: PlacedAnswers, stride: number): void {
    this.scratch.place(target, stride);
  }

  /** Where the next row's answers go: member m's to slot `slot + m` (see `answerInto`). */
  answerAt(slot: number): void {
    this.scratch.at = slot;
  }

  score(row: Float64Array, offset: number, verdict: Verdict): void {
    this.scoreMembers(row, offset);
    combineVotes(this.hard, this.voteParts, this.voteCounts, verdict);
    verdict.epoch = this.lifecycle.epoch;
  }

  /**
   * Every member's answer to a row, without the vote: where the answers go (see `answerInto`), another
   * thread votes with them.
   */
  scoreMembers(row: Float64Array, offset: number): void {
    this.checkRowOnly(row, offset);
    const { probs, preds, weights, confidence, accuracy, stride, at } = this.scratch;
    const seats = this.lifecycle.seats;
    const forest = this.forest;
    const walked = forest.walk(seats, row, offset);
    for (let m = 0; m < seats.length; m++) {
      const seat = seats[m]!;
      const s = at + m;
      preds[s] = walked
        ? forest.score(m, row, offset, probs, s * stride)
        : seat.member.score(row, offset, probs, s * stride);
      weights[s] = this.weight(seat);
      confidence[s] = seat.trust;
      if (accuracy !== null) accuracy[s] = seat.recentAccuracy;
    }
  }

  protected state(): BaggingState {
    return { poisson: this.poisson.map((r) => r.state()) };
  }

  /** Score every member on the row, train it with its Poisson weight, judge it; vote when asked. */
  protected step(row: Float64Array, offset: number, label: number, verdict: Verdict | null): void {
    const { probs, preds, weights, confidence, accuracy, classes, stride, at } = this.scratch;
    const seats = this.lifecycle.seats;
    const lifecycle = this.lifecycle;
    const forest = this.forest;
    const walked = forest.walk(seats, row, offset);
    for (let m = 0; m < seats.length; m++) {
      const seat = seats[m]!;
      const s = at + m;
      const k = this.sampler.sample(this.poisson[m]!);
      this.draws[m] = k;
      weights[s] = this.weight(seat);
      confidence[s] = seat.trust;
      const predicted = walked
        ? forest.scoreTrain(m, row, offset, label, k, probs, s * stride)
        : seat.member.scoreTrain(row, offset, label, k, probs, s * stride);
      preds[s] = predicted;
      seat.calibrate(label < classes ? probs[s * stride + label]! : 0, classes);
      lifecycle.coach(seat, row, offset, label, k);
      lifecycle.judge(seat, predicted === label, this.rows);
      if (accuracy !== null) accuracy[s] = seat.recentAccuracy;
    }
    if (verdict !== null) combineVotes(this.hard, this.voteParts, this.voteCounts, verdict);
  }

  private weight(seat: Seat): number {
    if (!this.lifecycle.votes(seat)) return 0;
    return this.options.vote === 'weighted' ? seat.recentAccuracy : 1;
  }
}
