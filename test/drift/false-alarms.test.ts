import { describe, expect, it } from 'vitest';
import { createDetector, type DetectorSpec } from '../../src/drift/index.js';
import { driftCount, errorStream, stationary } from '../support/drift-streams.js';
import { note } from '../support/note.js';

/**
 * False alarms: 100 seeded stationary Bernoulli(0.2) error streams of 10,000 values (seeds 1 … 100).
 * Each detector has a budget for the number of streams on which it raises `drift` at least once, and
 * for its mean number of alarms per stream; both figures are printed.
 *
 * Where a detector's definition gives no usable bound over a whole stream, the budget is calibrated on
 * 1,000 streams with other seeds (100000 … 100999, same generator): the calibrated share of streams p
 * plus three binomial standard deviations for 100 streams, 100p + 3√(100 p (1 − p)), and the calibrated
 * mean number of alarms plus three standard errors of a 100-stream mean.
 */
interface Budget {
  readonly spec: DetectorSpec;
  readonly streams: number;
  readonly alarmsPerStream: number;
}

const budgets: readonly Budget[] = [
  // Required by the issue: at most 5 of 100. ADWIN's guarantee (Bifet & Gavaldà 2007, Theorem 3.1) is
  // a false cut with probability ≤ δ at each check, with δ′ = δ/n spread over the cut points; calibrated
  // 0 of 1,000 streams for either form of the cut.
  { spec: { kind: 'adwin', delta: 0.002 }, streams: 5, alarmsPerStream: 0.05 },
  { spec: { kind: 'adwin', delta: 0.002, bound: 'hoeffding' }, streams: 5, alarmsPerStream: 0.05 },
  // DDM: a 3σ rule against the minimum of pᵢ + sᵢ, and that minimum is biased low (an early minimum
  // over few values has a small p_min and a large s_min), so there is no closed form. Calibrated 30.2%
  // of streams and 0.426 ± 0.78 alarms per stream → 30.2 + 3·4.6 ≈ 44 streams, 0.426 + 3·0.078 ≈ 0.67.
  { spec: { kind: 'ddm' }, streams: 44, alarmsPerStream: 0.67 },
  // EDDM compares p′ + 2s′ with its own running maximum and has no false-positive control: the maximum
  // of a noisy estimate soon exceeds the settled value by more than 1/0.9, and the detector restarts
  // about every 1,750 values. Calibrated 85.6% of streams, 5.70 ± 5.7 alarms per stream → 96 streams,
  // 5.70 + 3·0.57 ≈ 7.4 alarms per stream (the informative budget for EDDM).
  { spec: { kind: 'eddm' }, streams: 96, alarmsPerStream: 7.4 },
  // Page-Hinkley with δ = 0.005, λ = 50 on increments of mean −δ and variance σ² = p(1 − p) = 0.16:
  // Siegmund's approximation for the one-sided CUSUM (Sequential Analysis, 1985, from memory),
  // ARL₀ ≈ σ²/2δ² · (e^{2δb/σ²} − 2δb/σ² − 1) with b = λ + 1.166σ, gives ≈ 62,000 values, so a stream of
  // 10,000 alarms with probability 1 − e^{−10000/62000} ≈ 15% and carries ≈ 0.16 alarms. Budget
  // 15 + 3·3.6 ≈ 25 streams and 0.16 + 3·√(0.16/100) ≈ 0.28 alarms. (Calibrated: 11.5% and 0.12.)
  { spec: { kind: 'page-hinkley' }, streams: 25, alarmsPerStream: 0.28 },
  // HDDM_A bounds each single test by α_D = 0.001 but tests at every value against a moving cut, so the
  // stream-wide rate has no closed form. Calibrated 22.3% of streams and 0.262 ± 0.54 alarms per
  // stream → 22.3 + 3·4.2 ≈ 35 streams and 0.262 + 3·0.054 ≈ 0.43 alarms.
  { spec: { kind: 'hddm-a' }, streams: 35, alarmsPerStream: 0.43 },
];

describe('false alarms on 100 stationary Bernoulli(0.2) streams of 10,000 values', () => {
  for (const b of budgets) {
    it(`${JSON.stringify(b.spec)} stays within ${b.streams} streams and ${b.alarmsPerStream} alarms per stream`, () => {
      let streams = 0;
      let alarms = 0;
      for (let seed = 1; seed <= 100; seed++) {
        const count = driftCount(createDetector(b.spec), errorStream(seed, 10_000, 0.2, 0.2, stationary));
        if (count > 0) streams++;
        alarms += count;
      }
      note(
        `${JSON.stringify(b.spec)}: false drift on ${streams}/100 streams, ${(alarms / 100).toFixed(2)} alarms per stream`,
      );
      expect(streams).toBeLessThanOrEqual(b.streams);
      expect(alarms / 100).toBeLessThanOrEqual(b.alarmsPerStream);
    });
  }
});
