export { TreeForest } from './hoeffding-forest.js';
export type { HoeffdingRegressionTreeOptions, RegressionLeafKind } from './hoeffding-regression-tree.js';
export { HOEFFDING_REGRESSION_TREE_DEFAULTS, HoeffdingRegressionTree } from './hoeffding-regression-tree.js';
export type { HoeffdingTreeOptions, LeafModel } from './hoeffding-tree.js';
export { HOEFFDING_TREE_DEFAULTS, HoeffdingTree } from './hoeffding-tree.js';
export type { KnnVote, KnnWindowOptions } from './knn-window.js';
export { KNN_WINDOW_DEFAULTS, KnnWindow } from './knn-window.js';
export type { Classifier, ForgetsInputs, LearnerSnapshot, Regressor } from './learner.js';
export { checkLabel, checkRow, checkTarget, MAX_CLASSES } from './learner.js';
export type { LinearRegressionOptions } from './linear-regression.js';
export { LINEAR_REGRESSION_DEFAULTS, LinearRegression } from './linear-regression.js';
export type { LinearSvmOptions } from './linear-svm.js';
export { LINEAR_SVM_DEFAULTS, LinearSvm } from './linear-svm.js';
export type { LogisticOptions } from './logistic.js';
export { LOGISTIC_DEFAULTS, Logistic } from './logistic.js';
export type { MlpOptions } from './mlp.js';
export { MLP_DEFAULTS, Mlp } from './mlp.js';
export type { NaiveBayesOptions } from './naive-bayes.js';
export { NAIVE_BAYES_DEFAULTS, NaiveBayes } from './naive-bayes.js';
export type { ClassifierKind, ClassifierSpec, RegressorKind, RegressorSpec } from './registry.js';
export {
  CLASSIFIER_KINDS,
  CLASSIFIER_OPTIONS,
  createClassifier,
  createRegressor,
  REGRESSOR_KINDS,
  REGRESSOR_OPTIONS,
  restoreClassifier,
  restoreRegressor,
} from './registry.js';
export type { SplitCriterion } from './split-merit.js';
