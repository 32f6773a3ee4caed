import { describe, expect, it } from 'vitest';
import { decodeF64, decodeI32, nominal, Rng } from '../../src/core/index.js';
import { HoeffdingTree } from '../../src/learners/hoeffding-tree.js';
import type { LearnerSnapshot } from '../../src/learners/learner.js';
import { led, rbf, type StreamGenerator, sea, stagger } from '../../src/streams/index.js';
import { describeLearnerContract } from '../support/learner-contract.js';
import { note } from '../support/note.js';

describeLearnerContract({
  name: 'hoeffding-tree',
  make: (gen, seed) => new HoeffdingTree(gen.schema, {}, seed),
  restore: (s: LearnerSnapshot) => HoeffdingTree.restore(s),
});

describeLearnerContract({
  name: 'hoeffding-tree (random feature subsets, Gini, majority leaves)',
  make: (gen, seed) =>
    new HoeffdingTree(gen.schema, { featureSubset: 2, merit: 'gini', leafModel: 'majority' }, seed),
  restore: (s: LearnerSnapshot) => HoeffdingTree.restore(s),
});

/** Prequential accuracy of a tree over `rows` rows, overall and over the last `tail` rows. */
function prequential(tree: HoeffdingTree, gen: StreamGenerator, rows: number, tail = 1000) {
  const width = gen.schema.features.length;
  const row = new Float64Array(width);
  const out = new Float64Array(gen.classes.length);
  tree.ensureClasses(gen.classes.length);
  let correct = 0;
  let tailCorrect = 0;
  for (let i = 0; i < rows; i++) {
    const label = gen.next(row, 0);
    const hit = tree.scoreTrain(row, 0, label, 1, out, 0) === label ? 1 : 0;
    correct += hit;
    if (i >= rows - tail) tailCorrect += hit;
  }
  return { accuracy: correct / rows, tail: tailCorrect / tail };
}

describe('hoeffding-tree on published streams', () => {
  it('LED, 10% noise, 100,000 rows: accuracy in [0.69, 0.745]', () => {
    // Breiman et al. 1984: Bayes accuracy 74% (PUBLISHED.md, derived 0.740022); Ortíz Díaz et al. 2015,
    // Table 2: Hoeffding tree ≈ 69.2% on a 100k LED stream.
    const { accuracy } = prequential(
      new HoeffdingTree(led().schema, {}, 1),
      led({ noise: 0.1 }, 21),
      100_000,
    );
    note(`LED 10% noise: Hoeffding tree prequential accuracy ${accuracy.toFixed(4)}`);
    expect(accuracy).toBeGreaterThanOrEqual(0.69);
    expect(accuracy).toBeLessThanOrEqual(0.745);
  });

  it('SEA θ = 8, 10% noise: ≥ 0.87 and never above the 90% Bayes bound beyond 3 standard errors', () => {
    // Street & Kim 2001; with 10% of labels flipped the best possible accuracy is 0.90 (PUBLISHED.md, derived).
    const n = 100_000;
    const { accuracy } = prequential(
      new HoeffdingTree(sea().schema, {}, 2),
      sea({ threshold: 8, noise: 0.1 }, 22),
      n,
    );
    note(`SEA θ=8, 10% noise: Hoeffding tree prequential accuracy ${accuracy.toFixed(4)}`);
    expect(accuracy).toBeGreaterThanOrEqual(0.87);
    expect(accuracy).toBeLessThanOrEqual(0.9 + 3 * Math.sqrt((0.9 * 0.1) / n));
  });

  it('STAGGER concept a, noise-free: 100% over the last 1,000 of 5,000 rows', () => {
    // Schlimmer & Granger 1986: the concepts are noise-free, so 100% is reachable (PUBLISHED.md).
    const { tail } = prequential(
      new HoeffdingTree(stagger().schema, {}, 3),
      stagger({ concept: 'a' }, 23),
      5000,
    );
    expect(tail).toBe(1);
  });
});

describe('hoeffding-tree mechanics', () => {
  it('splits only when the Hoeffding bound allows, and respects the depth cap', () => {
    const gen = sea({ noise: 0.1 }, 30);
    const shallow = new HoeffdingTree(gen.schema, { depthLimit: 2 }, 1);
    prequential(shallow, gen, 50_000);
    expect(shallow.shape.depth).toBeLessThanOrEqual(2);
    expect(shallow.shape.nodes).toBeGreaterThan(1);
  });

  it('keeps its size under the memory cap by deactivating leaves, and still learns', () => {
    const gen = sea({ noise: 0.1 }, 31);
    // Leaf statistics are single precision (4 bytes a value), so 4 KiB holds the leaves 8 KiB held in doubles.
    const capped = new HoeffdingTree(gen.schema, { byteLimit: 4 * 1024, checkInterval: 50 }, 1);
    const { accuracy } = prequential(capped, gen, 100_000);
    const shape = capped.shape;
    note(
      `memory-capped tree: ${shape.leaves} leaves, ${shape.activeLeaves} active, ${capped.sizeBytes()} bytes`,
    );
    expect(shape.activeLeaves).toBeLessThan(shape.leaves);
    expect(capped.sizeBytes()).toBeLessThanOrEqual(4 * 1024 + 1000);
    expect(accuracy).toBeGreaterThan(0.8);
  });

  it('routes missing values to the branch that took the most weight at its split, and never trains statistics on them', () => {
    const gen = sea({ noise: 0 }, 32);
    const tree = new HoeffdingTree(gen.schema, {}, 1);
    const width = gen.schema.features.length;
    const row = new Float64Array(width);
    const out = new Float64Array(2);
    while (tree.shape.nodes === 1) tree.scoreTrain(row, 0, gen.next(row, 0), 1, out, 0);
    type State = { firstChild: string; missingChild: string; leafOf: string; heads: string; classes: number };
    const i32 = (text: string) => decodeI32(text, 'test');
    const f64 = (text: string) => decodeF64(text, 'test');
    const before = tree.snapshot().state as State;
    const first = i32(before.firstChild)[0]!;
    const leafOf = i32(before.leafOf);
    const headSize = 4 + before.classes;
    // Each child starts with the class weight its branch received: the heavier one takes missing values.
    const weightOf = (heads: Float64Array, node: number) => {
      const at = leafOf[node]! * headSize + 4;
      return heads[at]! + heads[at + 1]!;
    };
    const seeded = f64(before.heads);
    const heavier = weightOf(seeded, first + 1) > weightOf(seeded, first) ? 1 : 0;
    expect(i32(before.missingChild)[0]).toBe(heavier);
    const missing = new Float64Array([Number.NaN, Number.NaN, Number.NaN]);
    tree.train(missing, 0, 0, 5);
    const after = f64((tree.snapshot().state as State).heads);
    expect(weightOf(after, first + heavier) - weightOf(seeded, first + heavier)).toBe(5);
    expect(weightOf(after, first + 1 - heavier)).toBe(weightOf(seeded, first + 1 - heavier));
    const k = tree.score(missing, 0, out, 0);
    expect(k === 0 || k === 1).toBe(true);
    expect(Math.abs(out[0]! + out[1]! - 1)).toBeLessThan(1e-12);
    // A tree fed only missing values has no statistics to split on, however much weight it sees.
    const blind = new HoeffdingTree(gen.schema, { checkInterval: 10 }, 1);
    for (let i = 0; i < 2000; i++) blind.train(missing, 0, i % 2, 1);
    expect(blind.shape.nodes).toBe(1);
  });

  it('answers and learns bit for bit alike through its numeric-only loops and through the general ones', () => {
    // An all-numeric schema takes the loops without plans; the same columns plus a nominal column that is
    // always missing take the general loops (the nominal column adds nothing to any statistic or product).
    for (const [classes, leafModel] of [
      [2, 'adaptive'],
      [3, 'adaptive'],
      [2, 'naive-bayes'],
    ] as const) {
      const gen = rbf({ classes, features: 6 }, 40 + classes);
      const width = gen.schema.features.length;
      const mixed = { features: [...gen.schema.features, nominal('never', 4)] };
      const options = { leafModel, checkInterval: 50 } as const;
      const numericTree = new HoeffdingTree(gen.schema, options, 1);
      const generalTree = new HoeffdingTree(mixed, options, 1);
      for (const tree of [numericTree, generalTree]) tree.ensureClasses(classes);
      const row = new Float64Array(width + 1);
      const a = new Float64Array(classes);
      const b = new Float64Array(classes);
      const rng = new Rng('numeric-loops');
      let differ = 0;
      for (let i = 0; i < 20_000; i++) {
        const label = gen.next(row, 0);
        if (rng.next() < 0.05) row[Math.floor(rng.next() * width)] = Number.NaN;
        row[width] = Number.NaN;
        const weight = Math.floor(rng.next() * 3);
        const p = numericTree.scoreTrain(row, 0, label, weight, a, 0);
        const q = generalTree.scoreTrain(row, 0, label, weight, b, 0);
        if (p !== q || a.some((v, k) => v !== b[k])) differ++;
        if (i % 5 === 0) {
          numericTree.train(row, 0, label, 1);
          generalTree.train(row, 0, label, 1);
        }
      }
      expect(differ).toBe(0);
      expect(numericTree.shape).toEqual(generalTree.shape);
      expect(numericTree.shape.nodes).toBeGreaterThan(5);
    }
  });

  it('refuses snapshots of former formats (version 6 with double leaf statistics, version 5 without the memory-cap clock, version 4 with a weight per node), saying which versions', () => {
    const tree = new HoeffdingTree(sea().schema, {}, 1);
    for (const version of [4, 5, 6]) {
      const old = { ...tree.snapshot(), version };
      expect(() => HoeffdingTree.restore(old)).toThrow(
        new RegExp(`format version ${version}; this build reads version 7`),
      );
    }
  });

  it('continues bit for bit after a snapshot round trip while the memory cap deactivates leaves', () => {
    const gen = sea({ noise: 0.1 }, 33);
    const width = gen.schema.features.length;
    const options = { byteLimit: 3 * 1024, checkInterval: 50 } as const;
    const original = new HoeffdingTree(gen.schema, options, 1);
    original.ensureClasses(2);
    const row = new Float64Array(width);
    const out = new Float64Array(2);
    const mine = new Float64Array(2);
    // 2,030 rows: the cap is checked every 500 units of weight, so the clock stands between two checks.
    for (let i = 0; i < 2030; i++) original.scoreTrain(row, 0, gen.next(row, 0), 1, out, 0);
    const copy = HoeffdingTree.restore(JSON.parse(JSON.stringify(original.snapshot())));
    let differ = 0;
    for (let i = 0; i < 30_000; i++) {
      const label = gen.next(row, 0);
      const p = original.scoreTrain(row, 0, label, 1 + (i % 3), out, 0);
      if (copy.scoreTrain(row, 0, label, 1 + (i % 3), mine, 0) !== p || out[1] !== mine[1]) differ++;
    }
    expect(original.shape.activeLeaves).toBeLessThan(original.shape.leaves);
    expect(differ).toBe(0);
    expect(copy.snapshot()).toEqual(original.snapshot());
  });

  it('refuses bad options, naming the parameter', () => {
    const schema = sea().schema;
    expect(() => new HoeffdingTree(schema, { hoeffdingDelta: 0 })).toThrow(/hoeffdingDelta/);
    expect(() => new HoeffdingTree(schema, { hoeffdingDelta: 1.5 })).toThrow(/hoeffdingDelta/);
    expect(() => new HoeffdingTree(schema, { checkInterval: 0 })).toThrow(/checkInterval/);
    expect(() => new HoeffdingTree(schema, { featureSubset: 9 })).toThrow(/featureSubset/);
    expect(() => new HoeffdingTree(schema, { merit: 'x' as 'gini' })).toThrow(/merit/);
    expect(() => new HoeffdingTree(schema, { byteLimit: -1 })).toThrow(/byteLimit/);
  });
});
