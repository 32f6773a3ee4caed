import type { FeatureSchema } from '../core/index.js';
import { checkLabel, checkRow } from '../learners/index.js';
import type { Ensemble, EnsembleKind, EnsembleSnapshot } from './ensemble.js';
import type { Lifecycle, SeatView } from './lifecycle.js';
import { MemberScratch } from './scratch.js';
import type { Verdict } from './verdict.js';
import type { MemberAnswers } from './vote.js';

/**
 * What bagging, boosting and stacking share: seats kept by a `Lifecycle`, per-row scratch for every
 * member's answer, the row count, class growth, size, views and the snapshot envelope. A kind adds how
 * a row is scored and how it is learnt (`score`, `step`), and what else it keeps (`state`).
 */
export abstract class SeatedEnsemble implements Ensemble {
  abstract readonly kind: EnsembleKind;
  abstract readonly options: object;
  readonly schema: FeatureSchema;
  rows = 0;
  protected readonly seed: string;
  protected readonly width: number;
  protected readonly lifecycle: Lifecycle;
  protected readonly scratch: MemberScratch;
  /** The scratch as the one part of the vote (see `combineVotes`), and its count of seats. */
  protected readonly voteParts: readonly MemberAnswers[];
  protected readonly voteCounts: readonly number[];
  private readonly version: number;

  protected constructor(
    schema: FeatureSchema,
    seed: string,
    lifecycle: Lifecycle,
    version: number,
    restored?: EnsembleSnapshot,
  ) {
    this.schema = schema;
    this.seed = seed;
    this.width = schema.features.length;
    this.lifecycle = lifecycle;
    this.version = version;
    this.scratch = new MemberScratch(lifecycle.seats.length);
    this.voteParts = [this.scratch];
    this.voteCounts = [lifecycle.seats.length];
    if (restored !== undefined) this.rows = restored.rows;
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
    this.classesGrew(n);
  }

  abstract score(row: Float64Array, offset: number, verdict: Verdict): void;

  train(row: Float64Array, offset: number, label: number): void {
    const code = this.checked(row, offset, label);
    this.step(row, offset, code, null);
    this.learnt(code);
  }

  scoreTrain(row: Float64Array, offset: number, label: number, verdict: Verdict): void {
    const code = this.checked(row, offset, label);
    // The verdict is the model's as it was when the row came: a seat replaced while learning from the
    // row belongs to the next epoch, as it would had the label come later (`score`, then `train`).
    const epoch = this.lifecycle.epoch;
    this.step(row, offset, code, verdict);
    verdict.epoch = epoch;
    this.learnt(code);
  }

  seats(): SeatView[] {
    return this.lifecycle.view();
  }

  /** Seat `seat`'s accuracy over its recent window (as `seats()` reports it, without building views). */
  recentAccuracy(seat: number): number {
    return this.lifecycle.seats[seat]!.recentAccuracy;
  }

  sizeBytes(): number {
    let bytes = this.ownBytes();
    for (const seat of this.lifecycle.seats)
      bytes += seat.member.sizeBytes() + (seat.understudy?.sizeBytes() ?? 0);
    return bytes;
  }

  snapshot(): EnsembleSnapshot {
    return {
      kind: this.kind,
      version: this.version,
      schema: this.schema,
      options: { ...this.options } as Record<string, unknown>,
      seed: this.seed,
      rows: this.rows,
      lifecycle: this.lifecycle.snapshot(this.rows),
      state: this.state(),
    };
  }

  /**
   * Score every member on a labelled row before it trains, train it, judge it; when `verdict` is given,
   * fill it (all but the epoch) exactly as `score` would have before the row was learnt. The row and
   * label are checked, and the classes grown after it, by the caller.
   */
  protected abstract step(row: Float64Array, offset: number, label: number, verdict: Verdict | null): void;

  /** What the kind keeps besides its seats, JSON-safe. */
  protected abstract state(): unknown;

  /** Called when classes grow, after members and scratch have grown. */
  protected classesGrew(_n: number): void {}

  /** Bytes held besides the members (a meta-learner, say). */
  protected ownBytes(): number {
    return 0;
  }

  protected checkRowOnly(row: Float64Array, offset: number): void {
    checkRow(this.kind, row, offset, this.width);
  }

  /**
   * Check a labelled row; returns the label as a small integer (`label | 0`, exact once checked). A
   * frame's labels are a Float64Array, and a label read from one arrives as a double, with which every
   * index the members compute from it (class counts, statistics slots) ran as floating-point arithmetic
   * converted back at each use: bagging ×10 with the lifecycle ran 1.11× as fast on one thread with the
   * integer, 1.2× on two.
   */
  private checked(row: Float64Array, offset: number, label: number): number {
    checkRow(this.kind, row, offset, this.width);
    checkLabel(this.kind, label);
    return label | 0;
  }

  private learnt(label: number): void {
    this.rows++;
    if (label >= this.scratch.classes) this.ensureClasses(label + 1);
  }
}
