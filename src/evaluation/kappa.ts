/**
 * The kappa family: an observed accuracy p₀ set against the accuracy p_c of a reference,
 * κ = (p₀ − p_c) / (1 − p_c). It is 1 for a perfect classifier, 0 for one no better than the
 * reference and negative for a worse one. The members differ only in the reference:
 *
 * - Cohen's κ (Cohen, "A coefficient of agreement for nominal scales", Educational and Psychological
 *   Measurement 20, 1960): p_c = Σₖ (row total k / n)(column total k / n), the agreement expected
 *   by chance between labels and predictions with the same marginals;
 * - κ-M (Bifet et al., "Efficient online evaluation of big data stream classifiers", KDD 2015, from
 *   memory): p_c = the accuracy of the majority-class classifier;
 * - κ vs no-change (Žliobaitė, Bifet, Read, Pfahringer & Holmes, "Evaluation methods and decision theory
 *   for classification of streaming data with temporal dependence", Machine Learning 98, 2015, from
 *   memory): p_c = the accuracy of the no-change classifier, which predicts the previous label.
 *
 * Undefined (NaN) when the reference is perfect (p_c = 1) or either accuracy is NaN.
 *
 * @example
 * kappaStatistic(140 / 200, 82 / 200); // 58/118 = 0.4915 (Witten & Frank, Data Mining, 2nd ed., §5.7)
 */
export function kappaStatistic(observed: number, reference: number): number {
  return reference < 1 ? (observed - reference) / (1 - reference) : Number.NaN;
}
