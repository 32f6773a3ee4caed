import { checkSnapshot, ShoalError } from '../core/index.js';
import { PrequentialViews, type PrequentialViewsState } from './prequential-views.js';
import {
  PAIR_FLOATS,
  type RegressionFigures,
  RegressionTally,
  type RegressionTallyState,
  type RegressionView,
  writePair,
} from './regression-tally.js';
import type { EvaluatorSnapshot } from './snapshot.js';
import { resolveViewOptions, type ViewOptions } from './view-options.js';

/** Headline figures of a regression evaluator, JSON-safe. */
export interface RegressionSummary {
  readonly rows: number;
  readonly window: number;
  readonly fading: number;
  readonly cumulative: RegressionFigures;
  readonly windowed: RegressionFigures;
  readonly faded: RegressionFigures;
}

const KIND = 'regression-evaluator';
const VERSION = 1;
const OWNER = 'regression evaluator';

interface RegressionEvaluatorState {
  readonly views: PrequentialViewsState<RegressionTallyState>;
}

/**
 * Prequential evaluation of a regressor from outcomes (the value predicted at scoring time and the
 * target when it arrives): MAE, RMSE and R² in the cumulative, sliding-window and fading-factor views
 * (Gama, Sebastião & Rodrigues, Machine Learning 90, 2013; see `PrequentialViews` and
 * `RegressionTally`). O(1) per record, O(1) amortised for the window; no allocation per record.
 *
 * @example
 * const evaluation = new RegressionEvaluator({ window: 200 });
 * evaluation.record(predictedAtScoring, target);
 * evaluation.windowed.rmse();
 */
export class RegressionEvaluator {
  readonly window: number;
  readonly fading: number;
  private readonly views: PrequentialViews<RegressionTallyState, RegressionTally>;

  constructor(options: ViewOptions = {}) {
    const { window, fading } = resolveViewOptions(OWNER, options);
    this.window = window;
    this.fading = fading;
    this.views = new PrequentialViews(() => new RegressionTally(), window, fading, 0, PAIR_FLOATS);
  }

  get cumulative(): RegressionView {
    return this.views.cumulative;
  }

  get windowed(): RegressionView {
    return this.views.window;
  }

  get faded(): RegressionView {
    return this.views.fading;
  }

  get rows(): number {
    return this.views.cumulative.rows();
  }

  /** Record one outcome: the value predicted at scoring time and the true target. */
  record(predicted: number, target: number): void {
    if (!Number.isFinite(target)) {
      throw new ShoalError('invalid-label', `${OWNER}: target must be a finite number, got ${target}`);
    }
    if (!Number.isFinite(predicted)) {
      throw new ShoalError('invalid-input', `${OWNER}: predicted must be a finite number, got ${predicted}`);
    }
    const views = this.views;
    const slot = views.open();
    writePair(views.ring, slot, predicted, target);
    views.close(slot);
  }

  reset(): void {
    this.views.clear();
  }

  summary(): RegressionSummary {
    return {
      rows: this.rows,
      window: this.window,
      fading: this.fading,
      cumulative: this.views.cumulative.figures(),
      windowed: this.views.window.figures(),
      faded: this.views.fading.figures(),
    };
  }

  snapshot(): EvaluatorSnapshot {
    const state: RegressionEvaluatorState = { views: this.views.state() };
    return { kind: KIND, version: VERSION, options: { window: this.window, fading: this.fading }, state };
  }

  static restore(snapshot: EvaluatorSnapshot): RegressionEvaluator {
    checkSnapshot(snapshot, KIND, VERSION);
    const evaluator = new RegressionEvaluator(snapshot.options as ViewOptions);
    evaluator.views.load((snapshot.state as RegressionEvaluatorState).views);
    return evaluator;
  }
}
