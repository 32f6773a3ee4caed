import { describe, expect, it } from 'vitest';
import { numericSchema, Rng } from '../../src/core/index.js';
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
  // 3 trees walk one by one, 7 as a group of five and two alone, 12 as two groups and two alone.
  it.each([3, 7, 12])(
    'scores and trains each of %i trees exactly as its own walk does, and follows the trees as they split',
    (members) => {
      const gen = sea({ noise: 0.1 }, 5);
      const { seats, data, labels, width } = seatsOn(gen, members, 15_000);
      const own = Array.from({ length: members }, (_, m) => new HoeffdingTree(gen.schema, {}, m));
      for (const tree of [...own, ...seats.map((s) => s.member)]) tree.ensureClasses(2);
      const forest = new TreeForest();
      const rng = new Rng('forest');
      const out = new Float64Array(members * 2);
      const mine = new Float64Array(2);
      let walked = 0;
      let differ = 0;
      const compare = (a: number, b: number, m: number) => {
        if (a !== b || out[2 * m] !== mine[0] || out[2 * m + 1] !== mine[1]) differ++;
      };
      for (let i = 0; i < labels.length; i++) {
        const at = i * width;
        if (forest.walk(seats, data, at)) walked++;
        for (let m = 0; m < members; m++) {
          const weight = Math.floor(rng.next() * 3);
          if (i % 7 === 0)
            compare(forest.score(m, data, at, out, 2 * m), own[m]!.score(data, at, mine, 0), m);
          const predicted = forest.scoreTrain(m, data, at, labels[i]!, weight, out, 2 * m);
          compare(predicted, own[m]!.scoreTrain(data, at, labels[i]!, weight, mine, 0), m);
        }
      }
      expect(walked).toBe(labels.length);
      expect(differ).toBe(0);
      for (const [m, { member }] of seats.entries()) expect(member.snapshot()).toEqual(own[m]!.snapshot());
      expect(seats.every(({ member }) => member.shape.nodes > 5)).toBe(true);
    },
  );

  it('takes in a learner that replaced another in a seat', () => {
    const { seats, data, labels, width } = seatsOn(sea({ noise: 0.1 }, 6), 3, 5000);
    for (let i = 0; i < labels.length; i++)
      for (const s of seats) s.member.train(data, i * width, labels[i]!, 1);
    const forest = new TreeForest();
    const out = new Float64Array(3 * 2);
    expect(forest.walk(seats, data, 0)).toBe(true);
    const fresh = new HoeffdingTree(seats[0]!.member.schema, {}, 9);
    fresh.ensureClasses(2);
    seats[1] = { member: fresh };
    expect(forest.walk(seats, data, 0)).toBe(true);
    forest.score(1, data, 0, out, 2);
    expect(Array.from(out.subarray(2, 4))).toEqual([0.5, 0.5]);
  });

  it('leaves rows with a missing value, and trees with a nominal split, to the trees own walks', () => {
    const { seats, data, labels, width } = seatsOn(sea({ noise: 0.1 }, 7), 2, 5000);
    for (let i = 0; i < labels.length; i++)
      for (const s of seats) s.member.train(data, i * width, labels[i]!, 1);
    const forest = new TreeForest();
    const row = Float64Array.from(data.subarray(0, width));
    row[1] = Number.NaN;
    expect(forest.walk(seats, row, 0)).toBe(false);
    const gen = stagger({ concept: 'a' }, 8);
    const nominal = [{ member: new HoeffdingTree(gen.schema, {}, 1) }];
    const r = new Float64Array(gen.schema.features.length);
    for (let i = 0; i < 10_000; i++) nominal[0]!.member.train(r, 0, gen.next(r, 0), 1);
    expect(nominal[0]!.member.shape.nodes).toBeGreaterThan(1);
    expect(forest.walk(nominal, r, 0)).toBe(false);
  });

  it('walks schemas of up to 1,024 features, the most a packed step holds, and leaves wider ones to the trees', () => {
    for (const [width, walks] of [
      [1024, true],
      [1025, false],
    ] as const) {
      const seats = [{ member: new HoeffdingTree(numericSchema(width), {}, 1) }];
      const row = new Float64Array(width).fill(1);
      const out = new Float64Array(2);
      seats[0]!.member.ensureClasses(2);
      for (let i = 0; i < 300; i++) {
        row[width - 1] = i % 2;
        seats[0]!.member.train(row, 0, i % 2, 1);
      }
      // The tree splits on the last feature, the highest index a step has to hold.
      expect(seats[0]!.member.shape.nodes).toBe(3);
      const forest = new TreeForest();
      expect(forest.walk(seats, row, 0)).toBe(walks);
      const own = seats[0]!.member.score(row, 0, out, 0);
      if (walks) expect(forest.score(0, row, 0, new Float64Array(2), 0)).toBe(own);
    }
  });
});
