export type {
  ClassificationEvaluatorOptions,
  ClassificationSummary,
} from './classification-evaluator.js';
export { ClassificationEvaluator, PROBABILITY_FLOOR_DEFAULT } from './classification-evaluator.js';
export type { ClassificationFigures, ClassificationView } from './confusion-tally.js';
export { MAX_EVALUATED_CLASSES } from './confusion-tally.js';
export { orNull } from './figure.js';
export { kappaStatistic } from './kappa.js';
export type { RegressionSummary } from './regression-evaluator.js';
export { RegressionEvaluator } from './regression-evaluator.js';
export type { RegressionFigures, RegressionView } from './regression-tally.js';
export type { SeatFigures } from './seat-scores.js';
export { SeatScores } from './seat-scores.js';
export type { EvaluatorSnapshot } from './snapshot.js';
export type { ViewOptions } from './view-options.js';
export { VIEW_DEFAULTS } from './view-options.js';
