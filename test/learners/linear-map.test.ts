import { describe, expect, it } from 'vitest';
import { nominal, numeric, Rng } from '../../src/core/index.js';
import { LinearMap } from '../../src/learners/linear-map.js';
import { SparseInput } from '../../src/learners/sparse-input.js';

const schema = { features: [numeric('x'), nominal('v', ['a', 'b', 'c']), numeric('y')] };

describe('SparseInput', () => {
  it('lays out standardised numerics, one-hot codes and the constant input', () => {
    const input = new SparseInput(schema);
    expect(input.dimension).toBe(2 + 3 + 1);
    const rows = new Float64Array([1, 0, 10, 3, 2, 30]);
    input.scaler.observe(rows, 0, 1);
    input.scaler.observe(rows, 3, 1);
    // x: mean 2, population sd 1; y: mean 20, sd 10.
    input.encode(new Float64Array([4, 2, 15]), 0);
    expect(Array.from(input.index.subarray(0, input.size))).toEqual([0, 1, 2 + 2, 5]);
    expect(Array.from(input.value.subarray(0, input.size))).toEqual([2, -0.5, 1, 1]);
  });

  it('leaves out a missing value and an out-of-range code', () => {
    const input = new SparseInput(schema);
    input.encode(new Float64Array([Number.NaN, 3, Number.POSITIVE_INFINITY]), 0);
    expect(Array.from(input.index.subarray(0, input.size))).toEqual([5]);
    input.encode(new Float64Array([1, 1.5, 2]), 0);
    expect(Array.from(input.index.subarray(0, input.size))).toEqual([0, 1, 5]);
  });
});

describe('LinearMap (w = s·v)', () => {
  it('equals plain dense weights under a seeded run of shrinks, steps, resets and projections', () => {
    const rng = new Rng(81);
    const input = new SparseInput(schema);
    const map = new LinearMap(input.dimension);
    const dense: number[][] = [];
    const row = new Float64Array(3);
    for (let step = 0; step < 3000; step++) {
      if (step === 0 || step === 1000) {
        const rows = step === 0 ? 2 : 3;
        map.grow(rows);
        while (dense.length < rows) dense.push(new Array(input.dimension).fill(0));
      }
      row[0] = rng.normal();
      row[1] = rng.int(4) - 0.5 * rng.int(2);
      row[2] = rng.next() < 0.1 ? Number.NaN : rng.normal();
      input.encode(row, 0);
      const x = new Array(input.dimension).fill(0);
      for (let k = 0; k < input.size; k++) x[input.index[k]!] = input.value[k]!;
      const factor = step % 500 === 499 ? 0 : rng.next() < 0.01 ? 1e-6 : 1 - 0.01 * rng.next();
      map.decay(factor);
      for (const w of dense) for (let i = 0; i < w.length; i++) w[i]! *= factor;
      const c = rng.int(map.rows);
      const amount = rng.normal();
      map.add(c, input, amount);
      dense[c] = dense[c]!.map((w, i) => w + amount * x[i]);
      if (rng.next() < 0.05) {
        map.rescale(c, 0.5);
        dense[c] = dense[c]!.map((w) => w * 0.5);
      }
      for (let r = 0; r < map.rows; r++) {
        const want = dense[r]!.reduce((s, w, i) => s + w * x[i], 0);
        expect(map.dot(r, input)).toBeCloseTo(want, 9);
        const norm = dense[r]!.reduce((s, w) => s + w * w, 0);
        expect(Math.abs(map.normSquared(r) - norm)).toBeLessThanOrEqual(1e-9 * Math.max(1, norm));
      }
    }
  });

  it('survives a state round trip bit for bit', () => {
    const input = new SparseInput(schema);
    const map = new LinearMap(input.dimension);
    map.grow(2);
    input.encode(new Float64Array([1, 2, 3]), 0);
    map.add(1, input, 0.3);
    map.decay(0.5);
    const copy = new LinearMap(input.dimension);
    copy.grow(2);
    copy.load(JSON.parse(JSON.stringify(map.state())));
    expect(copy.dot(1, input)).toBe(map.dot(1, input));
    expect(copy.normSquared(1)).toBe(map.normSquared(1));
    expect(() => copy.load({ ...map.state(), scale: map.state().weights })).toThrow(/linear weight scales/);
  });
});
