import { ShoalError } from '../core/index.js';
import type { MemberAnswers } from './vote.js';

/**
 * Per-row scratch of an ensemble: every member's class probabilities, predicted class, vote weight and
 * confidence. Allocated once and grown only when classes appear — or placed over arrays of many rows
 * (`place`), where a worker thread's shard writes each row's answers straight into shared memory.
 */
export class MemberScratch implements MemberAnswers {
  readonly members: number;
  classes = 0;
  /** Slots from one member's probabilities to the next's: `classes`, unless placed. */
  stride = 0;
  /** The slot of the first member's answers (its probabilities start at `at` × `stride`). */
  at = 0;
  probs: Float64Array = new Float64Array(0);
  preds: Int32Array;
  weights: Float64Array;
  /** How far each member's answer is trusted, in [0, 1] (`Seat.trust`). */
  confidence: Float64Array;
  /** Where placed: each seat's recent accuracy after the row (`Seat.recentAccuracy`), slot by slot. */
  accuracy: Float64Array | null = null;
  private placed = false;

  constructor(members: number) {
    this.members = members;
    this.preds = new Int32Array(members);
    this.weights = new Float64Array(members);
    this.confidence = new Float64Array(members);
  }

  fit(classes: number): void {
    if (this.placed) {
      roomFor(classes, this.stride);
      this.classes = classes;
      return;
    }
    this.classes = classes;
    this.stride = classes;
    this.probs = new Float64Array(this.members * classes);
  }

  /**
   * Answer into `target` from now on, `stride` slots a member: at least every class there will be while
   * placed (more are refused); `at` then says where each row goes.
   */
  place(target: PlacedAnswers, stride: number): void {
    roomFor(this.classes, stride);
    this.placed = true;
    this.stride = stride;
    this.at = 0;
    this.probs = target.probs;
    this.preds = target.preds;
    this.weights = target.weights;
    this.confidence = target.confidence;
    this.accuracy = target.accuracy;
  }
}

/** Refuse answers of more classes than the slots placed for them hold. */
function roomFor(classes: number, stride: number): void {
  if (classes > stride) {
    throw new ShoalError('invalid-parameter', `answers of ${classes} classes placed in slots of ${stride}`);
  }
}

/** Arrays of many rows' answers, where a placed scratch writes (see `MemberScratch.place`). */
export type PlacedAnswers = Pick<MemberAnswers, 'probs' | 'preds' | 'weights' | 'confidence'> & {
  readonly accuracy: Float64Array;
};
