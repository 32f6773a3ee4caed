import { checkSnapshot, integerAtLeast, ShoalError } from '../core/index.js';
import { ClassificationEvaluator, type ClassificationEvaluatorOptions } from './classification-evaluator.js';
import { orNull } from './figure.js';
import type { EvaluatorSnapshot } from './snapshot.js';

/** One seat's line in a report. */
export interface SeatFigures {
  readonly seat: number;
  /** Records this seat's current member was judged on. */
  readonly rows: number;
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly windowedAccuracy: number | null;
  readonly windowedKappa: number | null;
}

const KIND = 'seat-scores';
const VERSION = 1;
const OWNER = 'seat scores';

/**
 * One classification evaluator per ensemble seat, fed each member's own prediction for a row (made
 * before the member trained on it), so that reports can show how every member fares beside the
 * ensemble. When a member is replaced, `reset(seat)` starts its successor's record from zero.
 *
 * @example
 * const scores = new SeatScores(10, { window: 500 });
 * scores.seat(3).record(memberPrediction, label, memberProbabilityOfLabel);
 * scores.summary()[3].windowedKappa;
 */
export class SeatScores {
  private readonly evaluators: ClassificationEvaluator[];
  private readonly options: ClassificationEvaluatorOptions;

  constructor(seats: number, options: ClassificationEvaluatorOptions = {}) {
    integerAtLeast(OWNER, 'seats', seats);
    this.evaluators = Array.from({ length: seats }, () => new ClassificationEvaluator(options));
    const first = this.evaluators[0]!;
    this.options = { window: first.window, fading: first.fading, probabilityFloor: first.probabilityFloor };
  }

  get seats(): number {
    return this.evaluators.length;
  }

  /** The evaluator of one seat. */
  seat(index: number): ClassificationEvaluator {
    const evaluator = this.evaluators[index];
    if (evaluator === undefined || !Number.isInteger(index)) {
      throw new ShoalError(
        'invalid-input',
        `${OWNER}: seat must be an integer in [0, ${this.seats}), got ${index}`,
      );
    }
    return evaluator;
  }

  /** Announce class codes 0 … n−1 to every seat. */
  ensureClasses(n: number): void {
    for (const evaluator of this.evaluators) evaluator.ensureClasses(n);
  }

  /** Start a seat's record afresh (its member was replaced). */
  reset(index: number): void {
    this.seat(index).reset();
  }

  summary(): SeatFigures[] {
    return this.evaluators.map((e, seat) => ({
      seat,
      rows: e.rows,
      accuracy: orNull(e.cumulative.accuracy()),
      kappa: orNull(e.cumulative.kappa()),
      windowedAccuracy: orNull(e.windowed.accuracy()),
      windowedKappa: orNull(e.windowed.kappa()),
    }));
  }

  snapshot(): EvaluatorSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      options: { seats: this.seats, ...this.options },
      state: { seats: this.evaluators.map((e) => e.snapshot()) },
    };
  }

  static restore(snapshot: EvaluatorSnapshot): SeatScores {
    checkSnapshot(snapshot, KIND, VERSION);
    const { seats, ...options } = snapshot.options as unknown as ClassificationEvaluatorOptions & {
      seats: number;
    };
    const scores = new SeatScores(seats, options);
    const saved = (snapshot.state as { seats?: unknown }).seats;
    if (!Array.isArray(saved) || saved.length !== scores.seats) {
      throw new ShoalError(
        'invalid-snapshot',
        `${KIND} snapshot: state.seats must list ${scores.seats} evaluators`,
      );
    }
    saved.forEach((s: EvaluatorSnapshot, i) => {
      scores.evaluators[i] = ClassificationEvaluator.restore(s);
    });
    return scores;
  }
}
