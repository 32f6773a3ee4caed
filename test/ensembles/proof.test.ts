import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { proofMargin, provenBetter } from '../../src/ensembles/index.js';
import { note } from '../support/note.js';

/**
 * The row (1-based) at which a candidate that errs with probability `candidate` is first proven better
 * than a member that errs with probability `member`, their errors independent; Infinity if never within
 * `rows`.
 */
function firstProof(rng: Rng, member: number, candidate: number, rows: number, delta: number): number {
  let gains = 0;
  let losses = 0;
  for (let t = 1; t <= rows; t++) {
    const memberWrong = rng.next() < member;
    const candidateWrong = rng.next() < candidate;
    if (memberWrong === candidateWrong) continue;
    if (memberWrong) gains++;
    else losses++;
    if (provenBetter(gains, losses, delta)) return t;
  }
  return Number.POSITIVE_INFINITY;
}

/** Discordant rows the test needs when a share s of them are gains: the least m with (2s − 1) m above the margin. */
function neededDiscordant(s: number, delta: number): number {
  let m = 1;
  while ((2 * s - 1) * m <= proofMargin(m, delta)) m++;
  return m;
}

describe('the proof an understudy must give before it takes a seat', () => {
  it('margin √(2 m ln(m(m + 1)/δ)) by hand', () => {
    // Hoeffding, JASA 58, 1963, Theorem 2 with range 1 per discordant row: P(gains − m/2 ≥ t) ≤ e^(−2t²/m);
    // at δₘ = δ/(m(m + 1)), gains − losses must exceed 2t = √(2 m ln(m(m + 1)/δ)) (derived).
    expect(proofMargin(70, 0.002)).toBeCloseTo(Math.sqrt(140 * Math.log((70 * 71) / 0.002)), 12);
    expect(proofMargin(70, 0.002)).toBeCloseTo(45.404952, 5);
    expect(provenBetter(58, 12, 0.002)).toBe(true); // 46 > 45.40
    expect(provenBetter(57, 13, 0.002)).toBe(false); // 44 < 45.40
    expect(provenBetter(0, 0, 0.002)).toBe(false);
  });

  it('a candidate no better than its member passes at any time in at most a share δ of streams', () => {
    // The guarantee derived from Hoeffding's inequality (1963) with a union bound over m (Σ δ/(m(m + 1)) = δ):
    // both err independently with probability 0.2, 10,000 rows each, 1,000 streams. The count allowed is
    // δ·n plus three binomial standard deviations.
    const rng = new Rng('proof-null');
    for (const delta of [0.05, 0.002]) {
      const streams = 1000;
      let passed = 0;
      for (let i = 0; i < streams; i++) if (firstProof(rng, 0.2, 0.2, 10_000, delta) < Infinity) passed++;
      const allowed = delta * streams + 3 * Math.sqrt(streams * delta * (1 - delta));
      note(
        `δ = ${delta}: ${passed} of ${streams} equal candidates proven better (allowed ${allowed.toFixed(1)})`,
      );
      expect(passed).toBeLessThanOrEqual(allowed);
    }
  }, 60_000);

  it('a candidate that errs half as often is proven within the rows the bound predicts', () => {
    // Member errs with 0.2, candidate with 0.1, independently: a share 0.26 of rows are discordant and
    // s = 0.18/0.26 of those are gains; the test needs the least m with (2s − 1) m > margin(m) (derived),
    // about m / 0.26 rows. Over 200 seeded streams the median row is within 25% of that and every
    // stream passes within three times it.
    const delta = 0.002;
    const s = (0.2 * 0.9) / (0.2 * 0.9 + 0.8 * 0.1);
    const predicted = neededDiscordant(s, delta) / (0.2 * 0.9 + 0.8 * 0.1);
    const rng = new Rng('proof-power');
    const rows = Array.from({ length: 200 }, () => firstProof(rng, 0.2, 0.1, 20_000, delta)).sort(
      (a, b) => a - b,
    );
    const median = rows[100]!;
    note(`proven at median row ${median} (predicted ${predicted.toFixed(0)}), last ${rows[199]}`);
    expect(Math.abs(median - predicted)).toBeLessThanOrEqual(0.25 * predicted);
    expect(rows[199]!).toBeLessThanOrEqual(3 * predicted);
  });
});
