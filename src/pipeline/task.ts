import type { FeatureSchema } from '../core/index.js';
import {
  createEnsemble,
  type Ensemble,
  type EnsembleSnapshot,
  type EnsembleSpec,
  type LifecycleSink,
  RegressionBagging,
  type RegressionBaggingSnapshot,
  restoreEnsemble,
} from '../ensembles/index.js';
import {
  ClassificationEvaluator,
  type EvaluatorSnapshot,
  orNull,
  RegressionEvaluator,
  type RegressionFigures,
  type ViewOptions,
} from '../evaluation/index.js';
import type { SummaryRecord, Task, ViewFigures } from '../journal/index.js';
import type { RegressionEnsembleSpec, RunConfig } from './config.js';

/**
 * What differs between the two tasks a session runs, so that everything else — scoring, pending
 * predictions, the label join, training, the journal — is one code path:
 * - the model: a classification ensemble (with its member lifecycle), or a bagging of regressors
 *   (`RegressionBagging`); both score into a `Verdict` and train on (row, label);
 * - the scorecard: how a served prediction is judged when its label arrives — the class served and the
 *   probability it gave the true class (`ClassificationEvaluator`: accuracy, κ family, log-loss), or the
 *   number served (`RegressionEvaluator`: MAE, RMSE, R²).
 */

/** The model a session scores with and trains: either task's ensemble. */
export type SessionModel = Ensemble | RegressionBagging;
export type SessionModelSnapshot = EnsembleSnapshot | RegressionBaggingSnapshot;

/** Build the model of a run's task; lifecycle changes (classification only) go to `journal`. */
export function createModel(config: RunConfig, schema: FeatureSchema, journal: LifecycleSink): SessionModel {
  if (config.task === 'regression')
    return new RegressionBagging(schema, config.ensemble as RegressionEnsembleSpec, config.seed);
  return createEnsemble(config.ensemble as EnsembleSpec, schema, config.seed, journal);
}

/** Rebuild the model of a run's task from its snapshot. */
export function restoreModel(
  task: Task,
  snapshot: SessionModelSnapshot,
  journal: LifecycleSink,
): SessionModel {
  if (task === 'regression') return RegressionBagging.restore(snapshot as RegressionBaggingSnapshot);
  return restoreEnsemble(snapshot as EnsembleSnapshot, journal);
}

/** The final figures of a scorecard, as the summary record carries them. */
export type SummaryFigures = Pick<
  SummaryRecord,
  | 'task'
  | 'accuracy'
  | 'kappa'
  | 'kappaM'
  | 'kappaNoChange'
  | 'logLoss'
  | 'macroF1'
  | 'mae'
  | 'rmse'
  | 'r2'
  | 'classes'
  | 'confusion'
>;

/**
 * Judges served predictions against their labels. `record` takes both readings of a served verdict
 * (the class and the probability it gave the true label; the number predicted) and keeps the one
 * its task judges.
 */
export interface Scorecard {
  readonly task: Task;
  /** Labels judged so far. */
  readonly rows: number;
  record(predicted: number, value: number, label: number, probability: number): void;
  /** Announce class codes 0 … n − 1 (a regression has none). */
  ensureClasses(n: number): void;
  /** The sliding-window and cumulative views, as the journal's window records carry them. */
  windowed(): ViewFigures;
  cumulative(): ViewFigures;
  summary(classes: readonly string[]): SummaryFigures;
  /** The headline figure and its chance-corrected companion over the window, for telemetry. */
  windowAccuracy(): number | null;
  windowKappa(): number | null;
  snapshot(): EvaluatorSnapshot;
}

const NO_CLASS_FIGURES = { accuracy: null, kappa: null, kappaM: null, kappaNoChange: null, logLoss: null };
const NO_REGRESSION_FIGURES = { mae: null, rmse: null, r2: null };

class ClassificationScorecard implements Scorecard {
  readonly task = 'classification';

  constructor(private readonly evaluator: ClassificationEvaluator) {}

  get rows(): number {
    return this.evaluator.rows;
  }

  record(predicted: number, _value: number, label: number, probability: number): void {
    this.evaluator.record(predicted, label, probability);
  }

  ensureClasses(n: number): void {
    if (n > this.evaluator.classes) this.evaluator.ensureClasses(n);
  }

  windowed(): ViewFigures {
    return this.view(this.evaluator.windowed.figures());
  }

  cumulative(): ViewFigures {
    return this.view(this.evaluator.cumulative.figures());
  }

  summary(classes: readonly string[]): SummaryFigures {
    const c = this.evaluator.cumulative.figures();
    return {
      task: this.task,
      accuracy: c.accuracy,
      kappa: c.kappa,
      kappaM: c.kappaM,
      kappaNoChange: c.kappaNoChange,
      logLoss: c.logLoss,
      macroF1: c.macroF1,
      ...NO_REGRESSION_FIGURES,
      classes: [...classes],
      confusion: square(c.confusion, classes.length),
    };
  }

  windowAccuracy(): number | null {
    return orNull(this.evaluator.windowed.accuracy());
  }

  windowKappa(): number | null {
    return orNull(this.evaluator.windowed.kappa());
  }

  snapshot(): EvaluatorSnapshot {
    return this.evaluator.snapshot();
  }

  private view(f: ReturnType<ClassificationEvaluator['windowed']['figures']>): ViewFigures {
    const { rows, accuracy, kappa, kappaM, kappaNoChange, logLoss } = f;
    return { rows, accuracy, kappa, kappaM, kappaNoChange, logLoss, ...NO_REGRESSION_FIGURES };
  }
}

class RegressionScorecard implements Scorecard {
  readonly task = 'regression';

  constructor(private readonly evaluator: RegressionEvaluator) {}

  get rows(): number {
    return this.evaluator.rows;
  }

  record(_predicted: number, value: number, label: number, _probability: number): void {
    this.evaluator.record(value, label);
  }

  /** A regression has no classes. */
  ensureClasses(_n: number): void {}

  windowed(): ViewFigures {
    return this.view(this.evaluator.summary().windowed);
  }

  cumulative(): ViewFigures {
    return this.view(this.evaluator.summary().cumulative);
  }

  summary(): SummaryFigures {
    const { mae, rmse, r2 } = this.evaluator.summary().cumulative;
    return { task: this.task, ...NO_CLASS_FIGURES, macroF1: null, mae, rmse, r2, classes: [], confusion: [] };
  }

  /** Accuracy and κ judge classes: a regression has neither. */
  windowAccuracy(): null {
    return null;
  }

  windowKappa(): null {
    return null;
  }

  snapshot(): EvaluatorSnapshot {
    return this.evaluator.snapshot();
  }

  private view({ rows, mae, rmse, r2 }: RegressionFigures): ViewFigures {
    return { rows, ...NO_CLASS_FIGURES, mae, rmse, r2 };
  }
}

/** The scorecard of a task, with the evaluation views' settings. */
export function createScorecard(task: Task, views: ViewOptions): Scorecard {
  return task === 'regression'
    ? new RegressionScorecard(new RegressionEvaluator(views))
    : new ClassificationScorecard(new ClassificationEvaluator(views));
}

export function restoreScorecard(task: Task, snapshot: EvaluatorSnapshot): Scorecard {
  return task === 'regression'
    ? new RegressionScorecard(RegressionEvaluator.restore(snapshot))
    : new ClassificationScorecard(ClassificationEvaluator.restore(snapshot));
}

/** The confusion matrix padded to `n` × `n` (classes named but never seen have zero rows). */
function square(confusion: readonly (readonly number[])[], n: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => confusion[i]?.[j] ?? 0));
}
