import { describe, expect, it } from 'vitest';
import {
  createEnsemble,
  type EnsembleSnapshot,
  type EnsembleSpec,
  restoreEnsemble,
  Verdict,
} from '../../src/ensembles/index.js';
import type { LifecycleChange } from '../../src/journal/index.js';
import { buildStream } from '../../src/streams/index.js';

const SPECS: readonly EnsembleSpec[] = [
  { kind: 'bagging', members: 5 },
  { kind: 'boosting', members: 5 },
  {
    kind: 'stacking',
    learners: [{ kind: 'hoeffding-tree' }, { kind: 'naive-bayes' }, { kind: 'linear-svm' }],
    meta: { kind: 'mlp' },
  },
];

/** STAGGER a → c → b, gradual (width 600) changes every 1,500 rows: members are watched before they are replaced. */
const stream = () =>
  buildStream({ generator: 'stagger', concepts: 'a,c,b', every: 1500, width: 600, seed: 12 });

function run(spec: EnsembleSpec, rows: number, seed: number) {
  const records: LifecycleChange[] = [];
  const ensemble = createEnsemble(spec, stream().schema, seed, (r) => records.push(r));
  ensemble.ensureClasses(2);
  const gen = stream();
  const row = new Float64Array(3);
  const verdict = new Verdict();
  const trace: number[] = [];
  for (let i = 0; i < rows; i++) {
    const label = gen.next(row, 0);
    ensemble.scoreTrain(row, 0, label, verdict);
    trace.push(verdict.probabilities[0]!, verdict.probabilities[1]!, verdict.agreement, verdict.voters);
  }
  return { ensemble, records, trace, gen };
}

describe.each(SPECS)('$kind ensemble', (spec) => {
  it('restores mid-stream, with an understudy in flight, and continues identically', () => {
    const a = run(spec, 1500, 3);
    const gen = a.gen;
    const row = new Float64Array(3);
    const verdict = new Verdict();
    // Advance until some seat is watched (an understudy is training).
    let guard = 0;
    while (!a.ensemble.seats().some((s) => s.understudy) && guard++ < 3000) {
      const label = gen.next(row, 0);
      a.ensemble.scoreTrain(row, 0, label, verdict);
    }
    expect(a.ensemble.seats().some((s) => s.understudy)).toBe(true);
    const saved = JSON.parse(JSON.stringify(a.ensemble.snapshot())) as EnsembleSnapshot;
    const records: LifecycleChange[] = [];
    const copy = restoreEnsemble(saved, (r) => records.push(r));
    const original: LifecycleChange[] = [];
    const resumed = restoreEnsemble(
      JSON.parse(JSON.stringify(a.ensemble.snapshot())) as EnsembleSnapshot,
      (r) => original.push(r),
    );
    expect(copy.rows).toBe(a.ensemble.rows);
    const v1 = new Verdict();
    const v2 = new Verdict();
    for (let i = 0; i < 2000; i++) {
      const label = gen.next(row, 0);
      resumed.scoreTrain(row, 0, label, v1);
      copy.scoreTrain(row, 0, label, v2);
      expect(v2.probabilities.slice(0, 2)).toEqual(v1.probabilities.slice(0, 2));
      expect(v2.predicted).toBe(v1.predicted);
    }
    expect(records).toEqual(original);
    expect(records.some((r) => r.to === 'retired')).toBe(true);
    expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(resumed.snapshot()));
  });
});

describe('ensemble registry', () => {
  it('refuses an unknown kind or snapshot, naming it', () => {
    expect(() => createEnsemble({ kind: 'voting' } as unknown as EnsembleSpec, stream().schema, 1)).toThrow(
      /voting/,
    );
    expect(() => restoreEnsemble({ kind: 'voting' } as unknown as EnsembleSnapshot)).toThrow(/voting/);
  });
});
