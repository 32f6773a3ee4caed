import { describe, expect, it } from 'vitest';
import { Boosting, Verdict } from '../../src/ensembles/index.js';
import { HoeffdingTree } from '../../src/learners/index.js';
import { sea, take } from '../../src/streams/index.js';
import { note } from '../support/note.js';
import { prequential } from '../support/prequential.js';

const STUMP = { kind: 'hoeffding-tree', depthLimit: 1, leafModel: 'majority' } as const;

describe('online boosting (Oza & Russell 2001)', () => {
  it('boosted stumps beat a single stump by ≥ 2 points on SEA, whose boundary is diagonal', () => {
    // SEA (Street & Kim 2001): the label is f1 + f2 ≤ θ, a diagonal line. A depth-1 tree cuts one axis once
    // and cannot follow it; boosting adds stumps on rows the earlier ones get wrong, building a staircase
    // along the diagonal (Freund & Schapire's AdaBoost behaviour, which Oza & Russell's online form tracks).
    const n = 50_000;
    const gen = () => sea({ threshold: 8, noise: 0.1 }, 4);
    const boosted = prequential(
      new Boosting(gen().schema, { members: 10, learners: [STUMP], lifecycle: { enabled: false } }, 1),
      gen(),
      n,
    );
    const stump = new HoeffdingTree(gen().schema, { depthLimit: 1, leafModel: 'majority' }, 1);
    stump.ensureClasses(2);
    const block = take(gen(), n);
    const out = new Float64Array(2);
    let right = 0;
    for (let i = 0; i < n; i++)
      if (stump.scoreTrain(block.rows, i * 3, block.labels[i]!, 1, out, 0) === block.labels[i]) right++;
    note(`SEA θ=8: boosted stumps ${boosted.accuracy.toFixed(4)}, single stump ${(right / n).toFixed(4)}`);
    expect(boosted.accuracy - right / n).toBeGreaterThanOrEqual(0.02);
  });

  it('weights members by log((1 − ε)/ε) and silences members with ε ≥ 0.5', () => {
    const gen = sea({ noise: 0.1 }, 5);
    const boost = new Boosting(
      gen.schema,
      { members: 4, learners: [STUMP], lifecycle: { enabled: false } },
      2,
    );
    prequential(boost, gen, 3000);
    for (let m = 0; m < 4; m++) {
      const e = boost.errorOf(m);
      expect(e).toBeGreaterThan(0);
      expect(e).toBeLessThan(1);
    }
    // The first member sees every row with λ = 1: its ε is its weighted error, below one half on SEA.
    expect(boost.errorOf(0)).toBeLessThan(0.5);
    const v = new Verdict();
    const row = new Float64Array([1, 1, 1]);
    boost.score(row, 0, v);
    const voting = [0, 1, 2, 3].filter((m) => boost.errorOf(m) < 0.5).length;
    expect(v.voters).toBe(voting);
  });

  it('caps the repeat count of a hard row and refuses bad options', () => {
    const schema = sea().schema;
    expect(() => new Boosting(schema, { maxRepeats: 0 })).toThrow(/maxRepeats/);
    expect(() => new Boosting(schema, { members: 0 })).toThrow(/members/);
    expect(() => new Boosting(schema, { learners: [] })).toThrow(/learners/);
  });
});
