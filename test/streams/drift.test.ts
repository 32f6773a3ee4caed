import { describe, expect, it } from 'vitest';
import { decodeF64 } from '../../src/core/index.js';
import { hyperplane, rbf, sine, take } from '../../src/streams/index.js';
import { note } from '../support/note.js';
import { expectShare } from './sampling.js';

function extra(snapshot: { state: { extra?: unknown } }): Record<string, unknown> {
  return snapshot.state.extra as Record<string, unknown>;
}

describe('rotating hyperplane drift', () => {
  // Hulten, Spencer & Domingos, KDD 2001 (PUBLISHED.md, from memory): drifting weights move by dᵢ·t.
  it('moves each drifting weight by magnitude × moves when directions never reverse, and no other weight', () => {
    const gen = hyperplane({ features: 6, drifting: 3, magnitude: 0.002, reversal: 0, period: 4 }, 91);
    const start = decodeF64(extra(gen.snapshot()).weights as string);
    const directions = decodeF64(extra(gen.snapshot()).directions as string);
    take(gen, 4003); // 1000 moves: after rows 4, 8, …, 4000
    const end = decodeF64(extra(gen.snapshot()).weights as string);
    for (let i = 0; i < 6; i++) {
      const expected = i < 3 ? start[i]! + directions[i]! * 0.002 * 1000 : start[i]!;
      expect(end[i]).toBeCloseTo(expected, 10);
    }
    expect(extra(gen.snapshot()).clock).toBe(3);
  });

  it('reverses a direction with the stated probability per move (within 5 SE)', () => {
    const moves = 100_000;
    const gen = hyperplane({ features: 2, drifting: 1, magnitude: 0.001, reversal: 0.1 }, 92);
    const row = new Float64Array(2);
    let previous = decodeF64(extra(gen.snapshot()).directions as string)[0]!;
    let reversals = 0;
    for (let i = 0; i < moves; i++) {
      gen.next(row, 0);
      const now = decodeF64(extra(gen.snapshot()).directions as string)[0]!;
      if (now !== previous) reversals++;
      previous = now;
    }
    expectShare('hyperplane direction reversals per move', reversals / moves, 0.1, moves);
  });
});

/**
 * Positions, row by row, of a coordinate starting at `x` that moves `v` per row and bounces off 0 and 1,
 * stepped one row at a time (independent of the generator's closed form).
 */
function bounce(x: number, v: number, rows: number): Float64Array {
  const out = new Float64Array(rows);
  for (let t = 0; t < rows; t++) {
    out[t] = x;
    x += v;
    if (x > 1) {
      x = 2 - x;
      v = -v;
    } else if (x < 0) {
      x = -x;
      v = -v;
    }
  }
  return out;
}

describe('random RBF', () => {
  it('labels rows with class shares equal to the weight shares of the centroids (within 5 SE)', () => {
    // Kirkby 2007 / Bifet et al. 2009 (PUBLISHED.md, from memory): a row's centroid is chosen with
    // probability proportional to its weight and lends the row its class.
    const n = 200_000;
    const gen = rbf({ classes: 3, centroids: 50 }, 93);
    const state = extra(gen.snapshot());
    const weights = decodeF64(state.weights as string);
    const labels = decodeF64(state.labels as string);
    const total = weights.reduce((a, b) => a + b, 0);
    const block = take(gen, n);
    for (let k = 0; k < 3; k++) {
      let expected = 0;
      for (let c = 0; c < 50; c++) if (labels[c] === k) expected += weights[c]! / total;
      const observed = block.labels.filter((l) => l === k).length / n;
      expectShare(`RBF class ${k}`, observed, expected, n);
    }
  });

  it('moves centroids at the stated speed, reflecting off the cube, as the mean of its rows shows', () => {
    // One centroid: the mean of rows around row t estimates its centre, which must follow a point
    // moving `speed` per row and bouncing off 0 and 1 (stepped independently in `bounce`).
    const speed = 0.0005;
    const gen = rbf({ features: 2, centroids: 1, speed }, 94);
    const state = extra(gen.snapshot());
    const origin = decodeF64(state.origins as string);
    const velocity = decodeF64(state.velocities as string);
    const spread = decodeF64(state.spreads as string)[0]!;
    expect(Math.hypot(velocity[0]!, velocity[1]!)).toBeCloseTo(speed, 12);
    const window = 2000;
    const block = take(gen, 10 * window);
    const path = [0, 1].map((j) => bounce(origin[j]!, velocity[j]!, 10 * window));
    for (let w = 0; w < 10; w++) {
      for (let j = 0; j < 2; j++) {
        let mean = 0;
        let centre = 0;
        for (let t = w * window; t < (w + 1) * window; t++) {
          mean += block.rows[t * 2 + j]! / window;
          centre += path[j]![t]! / window;
        }
        // Each coordinate of the offset has variance spread²/2 (a Gaussian distance along a random
        // direction in 2-D): 5 SE of a window mean.
        const tolerance = 5 * spread * Math.sqrt(0.5 / window);
        if (Math.abs(mean - centre) > tolerance) {
          expect.fail(`window ${w}, coordinate ${j}: mean ${mean}, centre ${centre}, tolerance ${tolerance}`);
        }
      }
    }
    const moved = Math.hypot(
      path[0]![10 * window - 1]! - origin[0]!,
      path[1]![10 * window - 1]! - origin[1]!,
    );
    note(
      `RBF single centroid moved ${moved.toFixed(4)} in ${10 * window} rows (speed ${speed}), spread ${spread.toFixed(3)}`,
    );
    expect(moved).toBeGreaterThan(0.5 * speed * window);
  });

  it('keeps centroids still at speed 0', () => {
    const gen = rbf({ speed: 0 }, 95);
    expect(decodeF64(extra(gen.snapshot()).velocities as string).every((v) => v === 0)).toBe(true);
  });
});

describe('SINE drift', () => {
  // Gama et al., SBIA 2004 (PUBLISHED.md, from memory): the drift reverses the labels.
  it('reverses every label of the same rows', () => {
    for (const curve of ['sine1', 'sine2'] as const) {
      const plain = take(sine({ curve }, 96), 5000);
      const reversed = take(sine({ curve, reversed: true }, 96), 5000);
      expect(Array.from(reversed.rows)).toEqual(Array.from(plain.rows));
      expect(Array.from(reversed.labels)).toEqual(Array.from(plain.labels, (l) => 1 - l));
    }
  });
});
