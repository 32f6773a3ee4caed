import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { HoeffdingTree, TreeForest } from '../../src/learners/index.js';
import { sea, stagger } from '../../src/streams/index.js';

/** Trees trained on the same stream with different seeded weights, so they grow apart. */
function seatsOn(gen: ReturnType<typeof sea>, members: number, rows: number) {
  const seats = Array.from({ length: members }, (_, m) => ({ member: new HoeffdingTree(gen.schema, {}, m) }));
  const width = gen.schema.features.length;
  const data = new Float64Array(rows * width);
  const labels = new Int32Array(rows);
  for (let i = 0; i < rows; i++) labels[i] = gen.next(data, i * width);
  return { seats, data, labels, width };
}

describe('TreeForest', () => {
  it('scores every tree exactly as its own walk does, and follows the trees as they split', () => {
    const { seats, data, labels, width } = seatsOn(sea({ noise: 0.1 }, 5), 4, 30_000);
    const forest = new TreeForest();
    const rng = new Rng('forest');
    const out = new Float64Array(4 * 2);
    const own = new Float64Array(2);
    const preds = new Int32Array(4);
    let compared = 0;
    for (let i = 0; i < labels.length; i++) {
      const at = i * width;
      if (i % 7 === 0) {
        expect(forest.score(seats, data, at, out, 2, preds)).toBe(true);
        seats.forEach(({ member }, m) => {
          expect(preds[m]).toBe(member.score(data, at, own, 0));
          expect(out.subarray(2 * m, 2 * m + 2)).toEqual(own);
        });
        compared++;
      }
      for (const { member } of seats) member.train(data, at, labels[i]!, Math.floor(rng.next() * 3));
    }
    expect(compared).toBeGreaterThan(4000);
    expect(seats.every(({ member }) => member.shape.nodes > 5)).toBe(true);
  });

  it('takes in a learner that replaced another in a seat', () => {
    const { seats, data, labels, width } = seatsOn(sea({ noise: 0.1 }, 6), 3, 5000);
    for (let i = 0; i < labels.length; i++)
      for (const s of seats) s.member.train(data, i * width, labels[i]!, 1);
    const forest = new TreeForest();
    const out = new Float64Array(3 * 2);
    const preds = new Int32Array(3);
    expect(forest.score(seats, data, 0, out, 2, preds)).toBe(true);
    const fresh = new HoeffdingTree(seats[0]!.member.schema, {}, 9);
    fresh.ensureClasses(2);
    seats[1] = { member: fresh };
    expect(forest.score(seats, data, 0, out, 2, preds)).toBe(true);
    expect(Array.from(out.subarray(2, 4))).toEqual([0.5, 0.5]);
  });

  it('leaves rows with a missing value, and trees with a nominal split, to the trees own walks', () => {
    const { seats, data, labels, width } = seatsOn(sea({ noise: 0.1 }, 7), 2, 5000);
    for (let i = 0; i < labels.length; i++)
      for (const s of seats) s.member.train(data, i * width, labels[i]!, 1);
    const forest = new TreeForest();
    const out = new Float64Array(4);
    const preds = new Int32Array(2);
    const row = Float64Array.from(data.subarray(0, width));
    row[1] = Number.NaN;
    expect(forest.score(seats, row, 0, out, 2, preds)).toBe(false);
    const gen = stagger({ concept: 'a' }, 8);
    const nominal = [{ member: new HoeffdingTree(gen.schema, {}, 1) }];
    const r = new Float64Array(gen.schema.features.length);
    for (let i = 0; i < 10_000; i++) nominal[0]!.member.train(r, 0, gen.next(r, 0), 1);
    expect(nominal[0]!.member.shape.nodes).toBeGreaterThan(1);
    expect(forest.score(nominal, r, 0, out, 2, preds)).toBe(false);
  });
});
