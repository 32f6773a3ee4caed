/**
 * Type declarations for the two npm reference libraries the tests compare against; the packages
 * ship JavaScript only. Only the calls the tests make are declared.
 */
declare module 'ml-naivebayes' {
  export class GaussianNB {
    train(trainingSet: number[][], trainingLabels: number[]): void;
    predict(dataset: number[][]): number[];
    /** The fitted model: per-class feature means; per class [log prior, ...[1/(√(2π)σ), −2σ²] per feature]. */
    toJSON(): { means: number[][]; calculateProbabilities: [number, ...[number, number][]][] };
  }
}

declare module 'ml-logistic-regression' {
  import type { Matrix } from 'ml-matrix';
  export default class LogisticRegression {
    constructor(options?: { numSteps?: number; learningRate?: number });
    train(X: Matrix, Y: Matrix): void;
    predict(X: Matrix): number[];
  }
}
