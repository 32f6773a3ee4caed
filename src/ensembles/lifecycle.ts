import { defaultsOf, type OptionsOf, type OptionTable, resolveOptions, ShoalError } from '../core/index.js';
import {
  createDetector,
  type DetectorSnapshot,
  type DetectorSpec,
  type DriftDetector,
  type DriftLevel,
  restoreDetector,
} from '../drift/index.js';
import type { LifecycleCause, LifecycleChange, MemberState, ProofRecord } from '../journal/index.js';
import type { Classifier, LearnerSnapshot } from '../learners/index.js';
import { restoreClassifier } from '../learners/index.js';
import { proofMargin, provenBetter } from './proof.js';

/**
 * The member lifecycle every ensemble kind shares. Each seat of an ensemble holds one member and a
 * monitor: a drift detector fed the member's own 0/1 error, measured on each row before the member
 * trains on it.
 *
 *   warming ──(warm-up rows)──► active ──(warning, recent error above the member's own record)──► watched
 *   watched ──(warning clears for a warm-up's worth of rows)──► active
 *   active | watched ──(drift, error went up)──► watched, its understudy on trial (started now if none)
 *   on trial ──(understudy measurably better)──► retired; the understudy takes the seat
 *   on trial ──(not measurably better within `trialRows` rows)──► active; the understudy is dropped
 *
 * While a member is `watched` an understudy trains on the same rows, as the background learner of Gomes
 * et al., "Adaptive random forests", Machine Learning 106, 2017 (from memory). Unlike there, a drift
 * signal alone replaces nothing: the understudy takes the seat only once it is measurably more accurate
 * than the member on the rows both answered since it started — a paired test with Hoeffding's bound
 * whose chance of passing an understudy that is no better is at most `proofDelta` (see proof.ts). So a
 * false alarm of the detector costs an understudy's training, not a member.
 * Guards: no member is judged before `minAge` rows; at most `maxReplacements` replacements happen within
 * any `replacementWindow` rows (no flapping) — an understudy proven while the cap is reached takes the
 * seat as soon as the cap allows; a drift towards lower error replaces nothing.
 * Every change of state is a `LifecycleChange` with a cause from the journal's closed set, handed to
 * the ensemble's `LifecycleSink` (the session journals it).
 */

/** The lifecycle's scalar options (see `OptionTable`); the detector is a spec of its own. */
export const LIFECYCLE_OPTIONS = {
  enabled: {
    type: 'boolean',
    default: true,
    doc: 'monitor members and replace degraded ones; off, every member stays active for good',
  },
  warmup: {
    type: 'integer',
    atLeast: 0,
    default: 100,
    doc: 'rows a new member spends warming, out of the vote',
  },
  minAge: {
    type: 'integer',
    atLeast: 0,
    default: 200,
    doc: 'rows a member must have seen before a warning or drift can act on it',
  },
  maxReplacements: {
    type: 'integer',
    atLeast: 0,
    default: 5,
    doc: 'replacements allowed within any replacementWindow rows',
  },
  replacementWindow: {
    type: 'integer',
    atLeast: 1,
    default: 1000,
    doc: 'the window of the replacement cap, in rows',
  },
  proofDelta: {
    type: 'number',
    above: 0,
    below: 1,
    default: 0.002,
    doc: 'δ: the chance that an understudy no better than its member is found better and takes the seat',
  },
  trialRows: {
    type: 'integer',
    atLeast: 1,
    default: 10_000,
    doc: 'rows an understudy has, after a drift signal, to prove itself better than its member',
  },
  accuracyWindow: {
    type: 'integer',
    atLeast: 1,
    default: 500,
    doc: "rows over which each member's recent accuracy is kept (weighted votes, reports)",
  },
} as const satisfies OptionTable;

export type LifecycleOptions = OptionsOf<typeof LIFECYCLE_OPTIONS> & {
  /** The detector each member's monitor runs. */
  readonly detector: DetectorSpec;
};

export const LIFECYCLE_DEFAULTS: LifecycleOptions = {
  ...defaultsOf(LIFECYCLE_OPTIONS),
  detector: { kind: 'adwin' },
};

export function checkLifecycleOptions(o: LifecycleOptions): LifecycleOptions {
  resolveOptions('lifecycle', LIFECYCLE_OPTIONS, o, ['detector']);
  createDetector(o.detector);
  return o;
}

/** Where a lifecycle hands its changes (the session adds the rows scored and journals them). */
export type LifecycleSink = (change: LifecycleChange) => void;

/** Builds the member for a seat; `memberId` seeds it, so replacements are deterministic. */
export type MemberFactory = (seat: number, memberId: number) => Classifier;

/**
 * What couples the seats of one ensemble: the replacement cap, and the seat count that member ids are
 * numbered by (see `memberId`). One thread keeps it in a `LocalLedger`; the shards of an ensemble split
 * over threads keep one between them (src/parallel), reaching the cap on the same rows. `row` is the
 * ensemble's row count when the lifecycle asks.
 */
export interface SeatLedger {
  /** Seats of the whole ensemble. */
  readonly seats: number;
  /** Whether `maxReplacements` replacements already happened within the window ending at `row`. */
  capReached(row: number): boolean;
  /** Count a replacement at `row`. */
  replaced(row: number): void;
  /** The replacements still in the window at `row` and after. */
  snapshot(row: number): Pick<LifecycleSnapshot, 'replacements'>;
}

/**
 * The id of the member started `start`-th (from 0: the seat's first member) in seat `seat` of an
 * ensemble of `seats` seats: seat + seats × start. Unique within the ensemble and never reused, and known
 * to the seat alone — no seat waits for another to number its members, on whatever thread each runs —
 * and it says where the member sat: in ten seats, member 23 is seat 3's third.
 */
export function memberId(seat: number, start: number, seats: number): number {
  return seat + seats * start;
}

/** The ledger of an ensemble in one thread. */
export class LocalLedger implements SeatLedger {
  readonly seats: number;
  private readonly options: LifecycleOptions;
  private replacements: number[];

  constructor(options: LifecycleOptions, seats: number, replacements: readonly number[] = []) {
    this.options = options;
    this.seats = seats;
    this.replacements = [...replacements];
  }

  capReached(row: number): boolean {
    return inWindow(this.replacements, row, this.options.replacementWindow) >= this.options.maxReplacements;
  }

  replaced(row: number): void {
    const window = this.options.replacementWindow;
    // Rows only grow: a replacement out of this row's window is out of every later one.
    while (this.replacements.length > 0 && this.replacements[0]! <= row - window) this.replacements.shift();
    this.replacements.push(row);
  }

  /**
   * Only the replacements that can still count: a row at or before `row − replacementWindow` never
   * counts again (later rows are larger), so the snapshot is the same however often the cap was asked.
   */
  snapshot(row: number): Pick<LifecycleSnapshot, 'replacements'> {
    const window = this.options.replacementWindow;
    return { replacements: this.replacements.filter((r) => r > row - window) };
  }
}

/** How many of `rows` (replacement rows, ascending) fall within the window ending at `row`. */
export function inWindow(rows: readonly number[], row: number, window: number): number {
  let n = 0;
  for (let i = rows.length - 1; i >= 0 && rows[i]! > row - window; i--) n++;
  return n;
}

/**
 * The trust of a member with no record: half its answer, half uniform, worth `TRUST_PRIOR_ROWS` rows, so
 * that a new member's first few answers cannot move it to either end. The EM fit moves it from there.
 */
const INITIAL_TRUST = 0.5;
const TRUST_PRIOR_ROWS = 10;
const MIN_TRUST = 0.01;

/** One seat of an ensemble: its member, monitor, understudy and recent record. */
export class Seat {
  readonly index: number;
  member: Classifier;
  memberId: number;
  /** Members started in the seat so far (its first, understudies), which numbers the next (see `memberId`). */
  starts = 1;
  state: MemberState;
  /** Rows judged since the member took the seat (an understudy brings its own count). */
  age = 0;
  /** Errors since the member took the seat. */
  errors = 0;
  monitor: DriftDetector;
  understudy: Classifier | null = null;
  understudyId = -1;
  understudyAge = 0;
  /** Consecutive stable rows while watched. */
  stableRun = 0;
  /** Rows since the understudy started on which the member erred and the understudy did not. */
  gains = 0;
  /** Rows since the understudy started on which the understudy erred and the member did not. */
  losses = 0;
  /** Whether the understudy answered the row being judged right (set by `Lifecycle.coach`). */
  understudyRight = false;
  /** Rows left for the understudy on trial after a drift signal to prove itself; 0: no trial. */
  trialLeft = 0;
  /** The monitor's estimate at the drift signal that opened the trial (journaled at the retirement). */
  trialEstimate = 0;
  /** No new watch before this age: a warning just cleared should not reopen on the next row. */
  calmUntil = 0;
  /** The understudy's class probabilities on the row being judged (scratch). */
  understudyOut: Float64Array = new Float64Array(2);
  private readonly ring: Uint8Array;
  private ringAt = 0;
  private ringFill = 0;
  private ringCorrect = 0;
  private trustMean = INITIAL_TRUST;
  private trustRows = 0;

  constructor(
    index: number,
    member: Classifier,
    memberId: number,
    state: MemberState,
    monitor: DriftDetector,
    window: number,
  ) {
    this.index = index;
    this.member = member;
    this.memberId = memberId;
    this.state = state;
    this.monitor = monitor;
    this.ring = new Uint8Array(window);
  }

  /** Accuracy over the last `accuracyWindow` rows (0 before the first). */
  get recentAccuracy(): number {
    return this.ringFill > 0 ? this.ringCorrect / this.ringFill : 0;
  }

  /** Count one judged row. */
  record(correct: boolean): void {
    const ring = this.ring;
    const bit = correct ? 1 : 0;
    if (this.ringFill === ring.length) this.ringCorrect -= ring[this.ringAt]!;
    else this.ringFill++;
    ring[this.ringAt] = bit;
    this.ringCorrect += bit;
    this.ringAt = this.ringAt + 1 === ring.length ? 0 : this.ringAt + 1;
    this.age++;
    if (!correct) this.errors++;
  }

  /**
   * How far the member's probabilities are trusted: the weight α of the mixture α·p + (1 − α)/C of its
   * answer with the uniform one that best explains the labels seen, fitted online by EM (the posterior
   * share of the member's component, averaged over the rows — over the last `accuracyWindow` rows once
   * that many were seen; Dempster, Laird & Rubin 1977, mixture weights; online form after Cappé &
   * Moulines 2009, from memory). Votes shrink each member's answer by it (see vote.ts).
   */
  get trust(): number {
    return this.trustMean;
  }

  /** Fit the trust to one more row: `p` is the probability the member gave the row's true class. */
  calibrate(p: number, classes: number): void {
    const a = this.trustMean;
    const mix = a * p + (1 - a) / classes;
    const share = mix > 0 ? (a * p) / mix : 0;
    if (this.trustRows < this.ring.length) this.trustRows++;
    // α = 0 is a fixed point of EM (the member's component would never be credited again): keep a floor.
    this.trustMean = Math.max(MIN_TRUST, a + (share - a) / (TRUST_PRIOR_ROWS + this.trustRows));
  }

  /** Forget the record (a new member took the seat). */
  clearRecord(): void {
    this.ring.fill(0);
    this.ringAt = 0;
    this.ringFill = 0;
    this.ringCorrect = 0;
    this.errors = 0;
    this.trustMean = INITIAL_TRUST;
    this.trustRows = 0;
  }

  snapshot(): SeatSnapshot {
    return {
      member: this.member.snapshot(),
      memberId: this.memberId,
      starts: this.starts,
      state: this.state,
      age: this.age,
      errors: this.errors,
      monitor: this.monitor.snapshot(),
      understudy: this.understudy?.snapshot() ?? null,
      understudyId: this.understudyId,
      understudyAge: this.understudyAge,
      stableRun: this.stableRun,
      gains: this.gains,
      losses: this.losses,
      trialLeft: this.trialLeft,
      trialEstimate: this.trialEstimate,
      calmUntil: this.calmUntil,
      ring: Array.from(this.ring).join(''),
      ringAt: this.ringAt,
      ringFill: this.ringFill,
      trust: this.trustMean,
      trustRows: this.trustRows,
    };
  }

  static restore(index: number, s: SeatSnapshot, window: number): Seat {
    const seat = new Seat(
      index,
      restoreClassifier(s.member),
      s.memberId,
      s.state,
      restoreDetector(s.monitor),
      window,
    );
    seat.starts = s.starts;
    seat.age = s.age;
    seat.errors = s.errors;
    seat.understudy = s.understudy === null ? null : restoreClassifier(s.understudy);
    seat.understudyId = s.understudyId;
    seat.understudyAge = s.understudyAge;
    seat.stableRun = s.stableRun;
    seat.gains = s.gains;
    seat.losses = s.losses;
    seat.trialLeft = s.trialLeft;
    seat.trialEstimate = s.trialEstimate;
    seat.calmUntil = s.calmUntil;
    if (s.ring.length !== window) {
      throw new ShoalError(
        'invalid-snapshot',
        `seat ${index}: accuracy window of ${s.ring.length} rows, expected ${window}`,
      );
    }
    for (let i = 0; i < window; i++) seat.ring[i] = s.ring.charCodeAt(i) === 49 ? 1 : 0;
    seat.ringAt = s.ringAt;
    seat.ringFill = s.ringFill;
    seat.trustMean = s.trust ?? INITIAL_TRUST;
    seat.trustRows = s.trustRows ?? 0;
    seat.ringCorrect = seat.ring.reduce((a, b) => a + b, 0);
    return seat;
  }
}

export interface SeatSnapshot {
  readonly member: LearnerSnapshot;
  readonly memberId: number;
  readonly starts: number;
  readonly state: MemberState;
  readonly age: number;
  readonly errors: number;
  readonly monitor: DetectorSnapshot;
  readonly understudy: LearnerSnapshot | null;
  readonly understudyId: number;
  readonly understudyAge: number;
  readonly stableRun: number;
  readonly gains: number;
  readonly losses: number;
  readonly trialLeft: number;
  readonly trialEstimate: number;
  readonly calmUntil: number;
  readonly ring: string;
  readonly ringAt: number;
  readonly ringFill: number;
  readonly trust?: number;
  readonly trustRows?: number;
}

export interface LifecycleSnapshot {
  readonly seats: readonly SeatSnapshot[];
  readonly epoch: number;
  readonly replacements: readonly number[];
  readonly classes: number;
}

/** A read-only view of a seat, for telemetry and reports. */
export interface SeatView {
  readonly seat: number;
  readonly member: number;
  readonly kind: string;
  readonly state: MemberState;
  readonly age: number;
  readonly recentAccuracy: number;
  readonly errorEstimate: number;
  readonly understudy: boolean;
}

/** The seats of one ensemble and the rules that move members through them. */
export class Lifecycle {
  readonly options: LifecycleOptions;
  readonly seats: Seat[];
  private readonly make: MemberFactory;
  private readonly journal: LifecycleSink;
  private readonly ledger: SeatLedger;
  /** Seat replacements so far: the model epoch. */
  epoch = 0;
  private classes = 0;

  /**
   * A shard of a larger ensemble (its seats `firstSeat` … run in another thread) passes `firstSeat`, so
   * that its seats carry their numbers, and its members the ids and seeds, they have in the whole
   * ensemble, and the `ledger` the shards share.
   */
  constructor(
    options: LifecycleOptions,
    seats: number,
    make: MemberFactory,
    journal: LifecycleSink,
    restored?: LifecycleSnapshot,
    firstSeat = 0,
    ledger?: SeatLedger,
  ) {
    this.options = checkLifecycleOptions(options);
    this.make = make;
    this.journal = journal;
    if (restored !== undefined) {
      this.seats = restored.seats.map((s, i) => Seat.restore(firstSeat + i, s, options.accuracyWindow));
      this.ledger = ledger ?? new LocalLedger(options, seats, restored.replacements);
      this.epoch = restored.epoch;
      this.classes = restored.classes;
      return;
    }
    this.seats = [];
    this.ledger = ledger ?? new LocalLedger(options, seats);
    const first: MemberState = options.enabled && options.warmup > 0 ? 'warming' : 'active';
    for (let i = 0; i < seats; i++) {
      const id = memberId(firstSeat + i, 0, this.ledger.seats);
      const seat = new Seat(
        firstSeat + i,
        make(i, id),
        id,
        first,
        createDetector(options.detector),
        options.accuracyWindow,
      );
      this.seats.push(seat);
      this.write(0, seat, null, first, 'created', 'ensemble created');
    }
  }

  /** Announce that labels 0 … n−1 exist to every member and understudy. */
  ensureClasses(n: number): void {
    if (n <= this.classes) return;
    this.classes = n;
    for (const seat of this.seats) {
      seat.member.ensureClasses(n);
      seat.understudy?.ensureClasses(n);
    }
  }

  /** Vote weight of a seat under plain voting: warming members sit out. */
  votes(seat: Seat): boolean {
    return seat.state !== 'warming';
  }

  /**
   * Score the seat's understudy on a labelled row before it trains on it, then train it with `weight`;
   * `judge` compares its answer with the member's. Call it before `judge`, for every row the member is
   * judged on (nothing happens when the seat has no understudy).
   */
  coach(seat: Seat, row: Float64Array, offset: number, label: number, weight: number): void {
    const understudy = seat.understudy;
    if (understudy === null) return;
    // Sized for a class the understudy may learn from this very row (a rare growth, not per row).
    if (seat.understudyOut.length <= Math.max(label, this.classes))
      seat.understudyOut = new Float64Array(2 * Math.max(label + 1, this.classes));
    seat.understudyRight = understudy.scoreTrain(row, offset, label, weight, seat.understudyOut, 0) === label;
  }

  /**
   * Judge a seat on one row: `correct` says whether its member's prediction (made before training on
   * the row) was right; `row` is the ensemble's row count. Returns true when a new member took the seat.
   */
  judge(seat: Seat, correct: boolean, row: number): boolean {
    seat.record(correct);
    const o = this.options;
    if (!o.enabled) return false;
    if (seat.understudy !== null) {
      // Compared once warmed up, as a member joins the vote only then: before, it is learning.
      if (++seat.understudyAge > o.warmup && correct !== seat.understudyRight) {
        if (correct) seat.losses++;
        else seat.gains++;
      }
    }
    if (seat.state === 'warming' && seat.age >= o.warmup)
      this.move(row, seat, 'active', 'warmed', 'warm-up complete');
    const monitor = seat.monitor;
    const level = monitor.update(correct ? 0 : 1);
    if (seat.age < o.minAge) return false;
    if (seat.trialLeft > 0) return this.trial(seat, level, row);
    if (level === 'drift') {
      // The detector says which way the error rate moved, from its statistics at the alarm.
      if (monitor.shift === 'fall') {
        const reason = 'drift towards fewer errors';
        if (seat.state === 'watched') this.clearWatch(row, seat, 'drift-ignored-improving', reason);
        else
          this.write(
            row,
            seat,
            seat.state,
            seat.state,
            'drift-ignored-improving',
            reason,
            monitor.alarmEstimate,
          );
        return false;
      }
      return this.alarm(seat, row);
    }
    if (level === 'warning') {
      seat.stableRun = 0;
      // A warning counts when the member errs more over its recent window than over its whole record.
      if (
        seat.state === 'active' &&
        seat.age >= seat.calmUntil &&
        1 - seat.recentAccuracy > seat.errors / seat.age
      ) {
        this.watch(seat, row);
      }
    } else if (seat.state === 'watched' && ++seat.stableRun >= Math.max(1, o.warmup)) {
      this.clearWatch(row, seat, 'watch-cleared', 'warning cleared');
    }
    return false;
  }

  /** Views of every seat, for telemetry and reports. */
  view(): SeatView[] {
    return this.seats.map((s) => ({
      seat: s.index,
      member: s.memberId,
      kind: s.member.kind,
      state: s.state,
      age: s.age,
      recentAccuracy: s.recentAccuracy,
      errorEstimate: s.monitor.estimate,
      understudy: s.understudy !== null,
    }));
  }

  /** The lifecycle's state; `row` is the ensemble's row count (see `SeatLedger.snapshot`). */
  snapshot(row: number): LifecycleSnapshot {
    return {
      seats: this.seats.map((s) => s.snapshot()),
      ...this.ledger.snapshot(row),
      epoch: this.epoch,
      classes: this.classes,
    };
  }

  private watch(seat: Seat, row: number): void {
    const id = this.startUnderstudy(seat);
    this.move(row, seat, 'watched', 'watched', `warning; understudy ${id} started`);
  }

  private startUnderstudy(seat: Seat): number {
    const id = memberId(seat.index, seat.starts++, this.ledger.seats);
    const understudy = this.make(seat.index, id);
    understudy.ensureClasses(this.classes);
    seat.understudy = understudy;
    seat.understudyId = id;
    seat.understudyAge = 0;
    seat.stableRun = 0;
    seat.gains = 0;
    seat.losses = 0;
    return id;
  }

  private clearWatch(
    row: number,
    seat: Seat,
    cause: LifecycleCause,
    reason: string,
    proof?: ProofRecord,
  ): void {
    seat.calmUntil = seat.age + this.options.warmup;
    seat.understudy = null;
    seat.understudyId = -1;
    seat.understudyAge = 0;
    seat.stableRun = 0;
    seat.trialLeft = 0;
    this.move(row, seat, 'active', cause, reason, seat.monitor.estimate, proof);
  }

  /** Whether the seat's understudy is measurably better than its member, and the cap allows a replacement. */
  private proven(seat: Seat): boolean {
    return seat.understudy !== null && provenBetter(seat.gains, seat.losses, this.options.proofDelta);
  }

  /**
   * A drift signal towards more errors: the understudy takes the seat at once when it is already
   * measurably better and the cap allows; otherwise it goes on trial (started now if there was none).
   */
  private alarm(seat: Seat, row: number): boolean {
    const o = this.options;
    const estimate = seat.monitor.alarmEstimate;
    if (this.proven(seat) && !this.ledger.capReached(row)) return this.replace(seat, row, 'drift', estimate);
    const from = seat.state;
    let reason: string;
    let cause: LifecycleCause = 'drift-on-trial';
    if (this.proven(seat)) {
      cause = 'drift-deferred';
      reason = `drift; understudy ${seat.understudyId} measurably better, replacement deferred (cap of ${o.maxReplacements} per ${o.replacementWindow} rows)`;
    } else if (seat.understudy === null) {
      const id = this.startUnderstudy(seat);
      reason = `drift; understudy ${id} started, on trial for ${o.trialRows} rows`;
    } else {
      reason = `drift; understudy ${seat.understudyId} on trial for ${o.trialRows} rows`;
    }
    seat.trialLeft = o.trialRows;
    seat.trialEstimate = estimate;
    seat.state = 'watched';
    this.write(row, seat, from, 'watched', cause, reason, estimate);
    return false;
  }

  /**
   * One row of a trial: the understudy takes the seat once it is measurably better (and the cap
   * allows); a later drift signal renews the trial; when the trial runs out unproven, the understudy is
   * dropped and the member stays.
   */
  private trial(seat: Seat, level: DriftLevel, row: number): boolean {
    if (this.proven(seat)) {
      if (!this.ledger.capReached(row)) return this.replace(seat, row, 'outperformed', seat.trialEstimate);
      return false;
    }
    if (level === 'drift') {
      if (seat.monitor.shift === 'rise') return this.alarm(seat, row);
      const estimate = seat.monitor.alarmEstimate;
      this.write(
        row,
        seat,
        'watched',
        'watched',
        'drift-ignored-improving',
        'drift towards fewer errors',
        estimate,
      );
    }
    if (--seat.trialLeft > 0) return false;
    this.clearWatch(
      row,
      seat,
      'trial-lapsed',
      `understudy ${seat.understudyId} not measurably better within ${this.options.trialRows} rows; dropped`,
      this.proof(seat),
    );
    return false;
  }

  private proof(seat: Seat): ProofRecord {
    const delta = this.options.proofDelta;
    return {
      rows: Math.max(0, seat.understudyAge - this.options.warmup),
      gains: seat.gains,
      losses: seat.losses,
      margin: proofMargin(seat.gains + seat.losses, delta),
      delta,
    };
  }

  private replace(seat: Seat, row: number, cause: 'drift' | 'outperformed', estimate: number): boolean {
    const o = this.options;
    const understudy = seat.understudy!;
    const proof = this.proof(seat);
    this.move(
      row,
      seat,
      'retired',
      cause,
      cause === 'drift' ? 'drift; understudy measurably better' : 'understudy on trial measurably better',
      estimate,
    );
    seat.member = understudy;
    seat.memberId = seat.understudyId;
    seat.age = seat.understudyAge;
    seat.understudy = null;
    seat.understudyId = -1;
    seat.understudyAge = 0;
    seat.stableRun = 0;
    seat.calmUntil = 0;
    seat.trialLeft = 0;
    seat.clearRecord();
    seat.monitor = createDetector(o.detector);
    seat.state = seat.age >= o.warmup || o.warmup === 0 ? 'active' : 'warming';
    this.write(
      row,
      seat,
      null,
      seat.state,
      'promoted',
      `understudy promoted: ${proof.gains} rows gained, ${proof.losses} lost over ${proof.rows} (needed a lead above ${proof.margin.toFixed(1)})`,
      seat.monitor.estimate,
      proof,
    );
    this.ledger.replaced(row);
    this.epoch++;
    return true;
  }

  private move(
    row: number,
    seat: Seat,
    to: MemberState,
    cause: LifecycleCause,
    reason: string,
    estimate = seat.monitor.estimate,
    proof?: ProofRecord,
  ): void {
    const from = seat.state;
    seat.state = to;
    this.write(row, seat, from, to, cause, reason, estimate, proof);
  }

  private write(
    row: number,
    seat: Seat,
    from: MemberState | null,
    to: MemberState,
    cause: LifecycleCause,
    reason: string,
    estimate = seat.monitor.estimate,
    proof?: ProofRecord,
  ): void {
    this.journal({
      type: 'lifecycle',
      trained: row,
      seat: seat.index,
      member: seat.memberId,
      learner: seat.member.kind,
      from,
      to,
      cause,
      detector: seat.monitor.kind,
      estimate,
      reason,
      ...(proof === undefined ? {} : { proof }),
    });
  }
}
