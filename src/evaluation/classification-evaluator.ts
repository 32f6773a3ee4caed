import { argmax, checkSnapshot, integerAtLeast, openUnit, ShoalError } from '../core/index.js';
import {
  type ClassificationFigures,
  type ClassificationView,
  ConfusionTally,
  type ConfusionTallyState,
  MAX_EVALUATED_CLASSES,
  OUTCOME_FLOATS,
  OUTCOME_INTS,
  writeOutcome,
} from './confusion-tally.js';
import { PrequentialViews, type PrequentialViewsState } from './prequential-views.js';
import { type EvaluatorSnapshot, readInteger } from './snapshot.js';
import { resolveViewOptions, type ViewOptions } from './view-options.js';

export interface ClassificationEvaluatorOptions extends ViewOptions {
  /**
   * The log-loss floor ε ∈ (0, 1): the probability given to the true class is clipped to [ε, 1]
   * before −ln p, so one confident mistake costs at most −ln ε (34.5 for the default 1e-15, common
   * practice) instead of an infinite loss that would swamp every later record.
   */
  readonly probabilityFloor?: number;
}

export const PROBABILITY_FLOOR_DEFAULT = 1e-15;

/** Headline figures of a classification evaluator, JSON-safe. */
export interface ClassificationSummary {
  /** Records evaluated since the start (or the last reset). */
  readonly rows: number;
  readonly window: number;
  readonly fading: number;
  readonly probabilityFloor: number;
  readonly cumulative: ClassificationFigures;
  readonly windowed: ClassificationFigures;
  readonly faded: ClassificationFigures;
}

const KIND = 'classification-evaluator';
const VERSION = 1;
const OWNER = 'classification evaluator';
/** Probabilities above 1 by less than this are rounding in the caller's normalisation. */
const ROUNDING_ABOVE_ONE = 1e-9;

interface ClassificationEvaluatorState {
  readonly previousLabel: number;
  readonly views: PrequentialViewsState<ConfusionTallyState>;
}

/**
 * Prequential (test-then-train) evaluation of a classifier from outcomes: each record is the
 * prediction made when the row was scored (the predicted class and the probability it gave the true
 * class) together with the label, whenever that label arrives. The evaluator never scores anything
 * itself, so delayed labels are judged on the prediction that was actually served.
 *
 * It keeps three views over the same records (see `PrequentialViews`): everything since the start,
 * the last `window` records, and a fading-factor view with factor `fading` (Gama, Sebastião &
 * Rodrigues, Machine Learning 90, 2013). Each view reports accuracy, Cohen's κ, κ-M, κ vs no-change,
 * log-loss, macro F1, per-class precision and recall and the confusion matrix. Classes may appear at
 * any time; the matrices grow.
 *
 * The no-change classifier behind κ vs no-change predicts the label of the previous record given to this
 * evaluator (label arrival order); the first record has no previous label and counts as its miss.
 *
 * Per record: O(1) work and no allocation for the cumulative and fading views, O(1) amortised for the
 * window; a new class costs one reallocation of each matrix.
 *
 * @example
 * const evaluation = new ClassificationEvaluator({ window: 500, fading: 0.998 });
 * evaluation.record(predictedAtScoring, label, probabilityOfLabelAtScoring);
 * evaluation.windowed.kappa();
 * JSON.stringify(evaluation.summary());
 */
export class ClassificationEvaluator {
  readonly window: number;
  readonly fading: number;
  readonly probabilityFloor: number;
  private readonly views: PrequentialViews<ConfusionTallyState, ConfusionTally>;
  private previousLabel = -1;

  constructor(options: ClassificationEvaluatorOptions = {}) {
    const { window, fading } = resolveViewOptions(OWNER, options);
    this.window = window;
    this.fading = fading;
    this.probabilityFloor = openUnit(
      OWNER,
      'probabilityFloor',
      options.probabilityFloor ?? PROBABILITY_FLOOR_DEFAULT,
    );
    this.views = new PrequentialViews(
      () => new ConfusionTally(),
      window,
      fading,
      OUTCOME_INTS,
      OUTCOME_FLOATS,
    );
  }

  /** Every record since the start. */
  get cumulative(): ClassificationView {
    return this.views.cumulative;
  }

  /** The last `window` records. */
  get windowed(): ClassificationView {
    return this.views.window;
  }

  /** Every record, the one k records back weighted α^k. */
  get faded(): ClassificationView {
    return this.views.fading;
  }

  /** Records evaluated since the start (or the last reset). */
  get rows(): number {
    return this.views.cumulative.rows();
  }

  /** Class codes known so far. */
  get classes(): number {
    return this.views.cumulative.classes;
  }

  /** Announce that class codes 0 … n−1 exist, so that reports show them before they occur. */
  ensureClasses(n: number): void {
    integerAtLeast(OWNER, 'classes', n, 0);
    if (n > MAX_EVALUATED_CLASSES) {
      throw new ShoalError(
        'invalid-parameter',
        `${OWNER}: classes must be at most ${MAX_EVALUATED_CLASSES}, got ${n}`,
      );
    }
    this.views.cumulative.ensureClasses(n);
    this.views.window.ensureClasses(n);
    this.views.fading.ensureClasses(n);
  }

  /**
   * Record one outcome: the class predicted at scoring time, the true label, and the probability the
   * prediction gave to that label (clipped to [probabilityFloor, 1] for the log-loss).
   */
  record(predicted: number, label: number, probabilityOfLabel: number): void {
    if (!(Number.isInteger(label) && label >= 0 && label < MAX_EVALUATED_CLASSES)) {
      throw new ShoalError(
        'invalid-label',
        `${OWNER}: label must be an integer class code in [0, ${MAX_EVALUATED_CLASSES}), got ${label}`,
      );
    }
    if (!(Number.isInteger(predicted) && predicted >= 0 && predicted < MAX_EVALUATED_CLASSES)) {
      throw new ShoalError(
        'invalid-input',
        `${OWNER}: predicted must be an integer class code in [0, ${MAX_EVALUATED_CLASSES}), got ${predicted}`,
      );
    }
    if (!(probabilityOfLabel >= 0 && probabilityOfLabel <= 1 + ROUNDING_ABOVE_ONE)) {
      throw new ShoalError(
        'invalid-input',
        `${OWNER}: probabilityOfLabel must be in [0, 1], got ${probabilityOfLabel}`,
      );
    }
    const p = Math.min(1, Math.max(probabilityOfLabel, this.probabilityFloor));
    const views = this.views;
    const slot = views.open();
    writeOutcome(views.ring, slot, label, predicted, label === this.previousLabel, -Math.log(p));
    views.close(slot);
    this.previousLabel = label;
  }

  /**
   * Record one outcome from the class distribution served at scoring time: `classes` probabilities at
   * `offset` of `probabilities`. The prediction is the most probable class (the first on ties); a
   * label beyond the distribution had probability 0.
   */
  recordDistribution(probabilities: ArrayLike<number>, offset: number, classes: number, label: number): void {
    if (
      !(Number.isInteger(offset) && offset >= 0 && classes >= 1 && offset + classes <= probabilities.length)
    ) {
      throw new ShoalError(
        'invalid-input',
        `${OWNER}: a distribution of ${classes} classes at offset ${offset} does not fit ${probabilities.length} values`,
      );
    }
    const predicted = argmax(probabilities, offset, classes);
    this.record(predicted, label, label < classes ? probabilities[offset + label]! : 0);
  }

  /** Forget every record (class codes stay known): for a seat whose member was replaced. */
  reset(): void {
    this.views.clear();
    this.previousLabel = -1;
  }

  summary(): ClassificationSummary {
    return {
      rows: this.rows,
      window: this.window,
      fading: this.fading,
      probabilityFloor: this.probabilityFloor,
      cumulative: this.views.cumulative.figures(),
      windowed: this.views.window.figures(),
      faded: this.views.fading.figures(),
    };
  }

  /** Everything needed to continue exactly where this evaluator is, JSON-safe. */
  snapshot(): EvaluatorSnapshot {
    const state: ClassificationEvaluatorState = {
      previousLabel: this.previousLabel,
      views: this.views.state(),
    };
    return {
      kind: KIND,
      version: VERSION,
      options: { window: this.window, fading: this.fading, probabilityFloor: this.probabilityFloor },
      state,
    };
  }

  static restore(snapshot: EvaluatorSnapshot): ClassificationEvaluator {
    checkSnapshot(snapshot, KIND, VERSION);
    const evaluator = new ClassificationEvaluator(snapshot.options as ClassificationEvaluatorOptions);
    const state = snapshot.state as ClassificationEvaluatorState;
    const previous = readInteger(state, 'previousLabel', `${KIND} snapshot`, -1);
    if (previous >= MAX_EVALUATED_CLASSES) {
      throw new ShoalError(
        'invalid-snapshot',
        `${KIND} snapshot: previousLabel ${previous} is not a class code`,
      );
    }
    evaluator.views.load(state.views);
    evaluator.previousLabel = previous;
    return evaluator;
  }
}
