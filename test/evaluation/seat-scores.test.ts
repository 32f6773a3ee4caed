import { describe, expect, it } from 'vitest';
import { Rng, ShoalError } from '../../src/core/index.js';
import { ClassificationEvaluator, type EvaluatorSnapshot, SeatScores } from '../../src/evaluation/index.js';

/** Three seats judged on the same seeded labels; seat s is right with probability 0.9 − 0.2 s. */
function play(scores: SeatScores, rows: number, seed: number, alone?: ClassificationEvaluator[]): void {
  const rng = new Rng(seed);
  for (let i = 0; i < rows; i++) {
    const label = rng.int(3);
    for (let seat = 0; seat < scores.seats; seat++) {
      const predicted = rng.next() < 0.9 - 0.2 * seat ? label : (label + 1) % 3;
      const p = predicted === label ? 0.7 : 0.2;
      scores.seat(seat).record(predicted, label, p);
      alone?.[seat]?.record(predicted, label, p);
    }
  }
}

describe('seat scores (one evaluator per ensemble seat)', () => {
  it('reports each seat as its own evaluator would, and resets one seat only', () => {
    const scores = new SeatScores(3, { window: 100 });
    const alone = [0, 1, 2].map(() => new ClassificationEvaluator({ window: 100 }));
    play(scores, 2000, 7, alone);
    const lines = scores.summary();
    lines.forEach((line, seat) => {
      const e = alone[seat]!;
      expect(line).toEqual({
        seat,
        rows: 2000,
        accuracy: e.cumulative.accuracy(),
        kappa: e.cumulative.kappa(),
        windowedAccuracy: e.windowed.accuracy(),
        windowedKappa: e.windowed.kappa(),
      });
    });
    // Seats were built to be right 90%, 70% and 50% of the time (seeded; tolerance common practice).
    expect(lines[0]!.accuracy).toBeGreaterThan(lines[1]!.accuracy!);
    expect(lines[1]!.accuracy).toBeGreaterThan(lines[2]!.accuracy!);
    expect(Math.abs(lines[0]!.accuracy! - 0.9)).toBeLessThan(0.03);

    scores.reset(1);
    const after = scores.summary();
    expect(after[1]).toEqual({
      seat: 1,
      rows: 0,
      accuracy: null,
      kappa: null,
      windowedAccuracy: null,
      windowedKappa: null,
    });
    expect(after[0]).toEqual(lines[0]);
  });

  it('a snapshot taken through JSON continues identically', () => {
    const scores = new SeatScores(3, { window: 64, fading: 0.9 });
    scores.ensureClasses(4);
    play(scores, 500, 3);
    const copy = SeatScores.restore(JSON.parse(JSON.stringify(scores.snapshot())) as EvaluatorSnapshot);
    play(scores, 300, 4);
    play(copy, 300, 4);
    expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(scores.snapshot()));
    expect(copy.seat(2).classes).toBe(4);
  });

  it('rejects a bad seat count, seat index or snapshot', () => {
    expect(() => new SeatScores(0)).toThrow(/seats/);
    expect(() => new SeatScores(2, { window: 0 })).toThrow(/window/);
    const scores = new SeatScores(2);
    expect(() => scores.seat(2)).toThrow(ShoalError);
    expect(() => scores.seat(-1)).toThrow(/seat/);
    expect(() => scores.seat(0.5)).toThrow(/seat/);
    const good = scores.snapshot();
    expect(() => SeatScores.restore({ ...good, state: { seats: [] } })).toThrow(/2 evaluators/);
    expect(() => SeatScores.restore({ ...good, kind: 'nope' })).toThrow(/nope/);
  });
});
