/**
 * The test a candidate (a seat's understudy) must pass before it takes the seat of the member it would
 * replace: it must be measurably more accurate than the member on the same rows.
 *
 * Both answer every row since the candidate started, so the comparison is paired (McNemar, "Note on the
 * sampling error of the difference between correlated proportions or percentages", Psychometrika 12,
 * 1947): rows on which both are right or both wrong say nothing about which is better; on each of the m
 * rows where exactly one errs, the candidate gains (the member erred) or loses (the candidate erred).
 * If the candidate is no better than the member, each such row is a gain with probability at most ½,
 * given everything before it, so by Hoeffding's inequality (Hoeffding, "Probability inequalities for
 * sums of bounded random variables", JASA 58, 1963, Theorem 2, in the martingale form of Azuma 1967):
 *
 *   P(gains − m/2 ≥ t) ≤ exp(−2t²/m),  so  P(gains − losses ≥ √(2 m ln(1/δₘ))) ≤ δₘ.
 *
 * The test is repeated after every discordant row, with δₘ = δ / (m(m + 1)); since Σₘ δ/(m(m + 1)) = δ,
 * a candidate that is no better than its member passes at any time with probability at most δ
 * (derived: a union bound over m).
 *
 * @example
 * provenBetter(60, 10, 0.002); // true: 50 > proofMargin(70, 0.002) ≈ 45.4
 */
export function proofMargin(discordant: number, delta: number): number {
  const m = discordant;
  return Math.sqrt(2 * m * Math.log((m * (m + 1)) / delta));
}

/** Whether `gains` against `losses` (the discordant rows) prove the candidate better at confidence δ. */
export function provenBetter(gains: number, losses: number, delta: number): boolean {
  const m = gains + losses;
  return m > 0 && gains - losses > proofMargin(m, delta);
}
