import { type FeatureSchema, type OptionTable, optionsOf, type Seed, ShoalError } from '../core/index.js';
import {
  HOEFFDING_REGRESSION_TREE_OPTIONS,
  HoeffdingRegressionTree,
  type HoeffdingRegressionTreeOptions,
} from './hoeffding-regression-tree.js';
import { HOEFFDING_TREE_OPTIONS, HoeffdingTree, type HoeffdingTreeOptions } from './hoeffding-tree.js';
import { KNN_WINDOW_OPTIONS, KnnWindow, type KnnWindowOptions } from './knn-window.js';
import type { Classifier, LearnerSnapshot, Regressor } from './learner.js';
import { LinearRegression, type LinearRegressionOptions } from './linear-regression.js';
import { LINEAR_SGD_OPTIONS } from './linear-regression-sgd.js';
import { LINEAR_SVM_OPTIONS, LinearSvm, type LinearSvmOptions } from './linear-svm.js';
import { LOGISTIC_OPTIONS, Logistic, type LogisticOptions } from './logistic.js';
import { MLP_OPTIONS, Mlp, type MlpOptions } from './mlp.js';
import { NAIVE_BAYES_OPTIONS, NaiveBayes, type NaiveBayesOptions } from './naive-bayes.js';

/** Every classifier kind, as written in configuration. */
export const CLASSIFIER_KINDS = [
  'hoeffding-tree',
  'naive-bayes',
  'logistic',
  'knn-window',
  'linear-svm',
  'mlp',
] as const;
export type ClassifierKind = (typeof CLASSIFIER_KINDS)[number];

/** Every regressor kind, as written in configuration. */
export const REGRESSOR_KINDS = ['hoeffding-regression-tree', 'linear-regression'] as const;
export type RegressorKind = (typeof REGRESSOR_KINDS)[number];

/** Each classifier's option table, by kind (what the configuration check reads). */
export const CLASSIFIER_OPTIONS: Readonly<Record<ClassifierKind, OptionTable>> = {
  'hoeffding-tree': HOEFFDING_TREE_OPTIONS,
  'naive-bayes': NAIVE_BAYES_OPTIONS,
  logistic: LOGISTIC_OPTIONS,
  'knn-window': KNN_WINDOW_OPTIONS,
  'linear-svm': LINEAR_SVM_OPTIONS,
  mlp: MLP_OPTIONS,
};

/** Each regressor's option table, by kind. */
export const REGRESSOR_OPTIONS: Readonly<Record<RegressorKind, OptionTable>> = {
  'hoeffding-regression-tree': HOEFFDING_REGRESSION_TREE_OPTIONS,
  'linear-regression': LINEAR_SGD_OPTIONS,
};

/** A classifier as configuration describes it: its kind and any options (the rest take their defaults). */
export type ClassifierSpec =
  | ({ readonly kind: 'hoeffding-tree' } & Partial<HoeffdingTreeOptions>)
  | ({ readonly kind: 'naive-bayes' } & Partial<NaiveBayesOptions>)
  | ({ readonly kind: 'logistic' } & Partial<LogisticOptions>)
  | ({ readonly kind: 'knn-window' } & Partial<KnnWindowOptions>)
  | ({ readonly kind: 'linear-svm' } & Partial<LinearSvmOptions>)
  | ({ readonly kind: 'mlp' } & Partial<MlpOptions>);

export type RegressorSpec =
  | ({ readonly kind: 'hoeffding-regression-tree' } & Partial<HoeffdingRegressionTreeOptions>)
  | ({ readonly kind: 'linear-regression' } & Partial<LinearRegressionOptions>);

/**
 * Build a classifier from its spec; options are validated by the learner (a bad one throws a
 * `ShoalError` with code `invalid-parameter` naming it).
 *
 * @example
 * const tree = createClassifier({ kind: 'hoeffding-tree', checkInterval: 100 }, schema, 'seed/3');
 */
export function createClassifier(spec: ClassifierSpec, schema: FeatureSchema, seed: Seed): Classifier {
  switch (spec?.kind) {
    case 'hoeffding-tree':
      return new HoeffdingTree(schema, optionsOf(spec), seed);
    case 'naive-bayes':
      return new NaiveBayes(schema, optionsOf(spec), seed);
    case 'logistic':
      return new Logistic(schema, optionsOf(spec), seed);
    case 'knn-window':
      return new KnnWindow(schema, optionsOf(spec), seed);
    case 'linear-svm':
      return new LinearSvm(schema, optionsOf(spec), seed);
    case 'mlp':
      return new Mlp(schema, optionsOf(spec), seed);
    default:
      throw new ShoalError(
        'invalid-parameter',
        `learner kind must be one of ${CLASSIFIER_KINDS.join(', ')}, got ${String((spec as { kind?: unknown })?.kind)}`,
      );
  }
}

export function createRegressor(spec: RegressorSpec, schema: FeatureSchema, seed: Seed): Regressor {
  switch (spec?.kind) {
    case 'hoeffding-regression-tree':
      return new HoeffdingRegressionTree(schema, optionsOf(spec), seed);
    case 'linear-regression':
      return new LinearRegression(schema, optionsOf(spec), seed);
    default:
      throw new ShoalError(
        'invalid-parameter',
        `regressor kind must be one of ${REGRESSOR_KINDS.join(', ')}, got ${String((spec as { kind?: unknown })?.kind)}`,
      );
  }
}

const CLASSIFIER_RESTORE: Readonly<Record<ClassifierKind, (s: LearnerSnapshot) => Classifier>> = {
  'hoeffding-tree': HoeffdingTree.restore,
  'naive-bayes': NaiveBayes.restore,
  logistic: Logistic.restore,
  'knn-window': KnnWindow.restore,
  'linear-svm': LinearSvm.restore,
  mlp: Mlp.restore,
};

const REGRESSOR_RESTORE: Readonly<Record<RegressorKind, (s: LearnerSnapshot) => Regressor>> = {
  'hoeffding-regression-tree': HoeffdingRegressionTree.restore,
  'linear-regression': LinearRegression.restore,
};

/** Rebuild a classifier from its snapshot. */
export function restoreClassifier(snapshot: LearnerSnapshot): Classifier {
  const restore = CLASSIFIER_RESTORE[snapshot?.kind as ClassifierKind];
  if (restore === undefined) {
    throw new ShoalError(
      'invalid-snapshot',
      `unknown classifier kind in snapshot: ${String(snapshot?.kind)}`,
    );
  }
  return restore(snapshot);
}

/** Rebuild a regressor from its snapshot. */
export function restoreRegressor(snapshot: LearnerSnapshot): Regressor {
  const restore = REGRESSOR_RESTORE[snapshot?.kind as RegressorKind];
  if (restore === undefined) {
    throw new ShoalError('invalid-snapshot', `unknown regressor kind in snapshot: ${String(snapshot?.kind)}`);
  }
  return restore(snapshot);
}
