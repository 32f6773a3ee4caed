import { describe, expect, it } from 'vitest';
import {
  createEnsemble,
  type Ensemble,
  type EnsembleSnapshot,
  type EnsembleSpec,
  restoreEnsemble,
  Verdict,
} from '../../src/ensembles/index.js';
import type { LifecycleChange } from '../../src/journal/index.js';
import { buildStream, type ConceptSchedule } from '../../src/streams/index.js';
import { expectShoalError } from './errors.js';

/**
 * The contract suite every ensemble kind passes (one suite, every implementation — see DEVELOPERS.md),
 * with and without the member lifecycle:
 * - `scoreTrain(row)` is `score(row)` followed by `train(row)`: the same verdicts bit for bit, the same
 *   journal and the same final snapshot. A service scores a row when it arrives and trains when its label
 *   comes; a replay does both at once; the two must agree.
 * - the same seed gives the same verdicts, journal and snapshot;
 * - a snapshot taken mid-run (through JSON) restores to an ensemble that continues identically;
 * - a row with an infinite value is refused, naming the feature, and changes nothing (IEEE 754 gives
 *   ±∞ no place on a feature's scale; NaN is the missing-value marker and passes).
 *
 * The stream is SEA (Street & Kim, KDD 2001; PUBLISHED.md) with abrupt changes θ = 7 → 9.5 → 7 → 9.5 every
 * 2,000 rows, 5% label noise: the changes make members drift, so with the lifecycle on seats are
 * watched and replaced during the run (checked below) — the code paths where the two forms could part.
 */
export interface EnsembleCase {
  readonly name: string;
  readonly spec: EnsembleSpec;
}

const ROWS = 8000;
const SEED = 17;

const stream = (): ConceptSchedule =>
  buildStream({ generator: 'sea', concepts: '7,9.5,7,9.5', every: 2000, noise: 0.05, seed: 23 });

/** Everything a verdict says, as numbers, for one row. */
function push(trace: number[], v: Verdict): void {
  for (let k = 0; k < v.classes; k++) trace.push(v.probabilities[k]!);
  trace.push(v.classes, v.predicted, v.agreement, v.voters, v.epoch);
}

interface Run {
  readonly ensemble: Ensemble;
  readonly trace: Float64Array;
  readonly records: LifecycleChange[];
}

type Step = (e: Ensemble, row: Float64Array, label: number, v: Verdict) => void;

const together: Step = (e, row, label, v) => e.scoreTrain(row, 0, label, v);
const apart: Step = (e, row, label, v) => {
  e.score(row, 0, v);
  e.train(row, 0, label);
};

function run(c: EnsembleCase, step: Step, rows = ROWS, seed = SEED): Run {
  const records: LifecycleChange[] = [];
  const gen = stream();
  const ensemble = createEnsemble(c.spec, gen.schema, seed, (r) => records.push(r));
  return { ensemble, records, trace: continueRun(ensemble, gen, step, rows) };
}

function continueRun(ensemble: Ensemble, gen: ConceptSchedule, step: Step, rows: number): Float64Array {
  const row = new Float64Array(gen.schema.features.length);
  const verdict = new Verdict();
  const trace: number[] = [];
  for (let i = 0; i < rows; i++) {
    const label = gen.next(row, 0);
    step(ensemble, row, label, verdict);
    push(trace, verdict);
  }
  return Float64Array.from(trace);
}

const bytes = (a: Float64Array): Buffer => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

export function describeEnsembleContract(c: EnsembleCase): void {
  describe(`${c.name} keeps the ensemble contract`, () => {
    const lifecycle = c.spec.lifecycle?.enabled !== false;

    it('scoreTrain gives bit-identical verdicts, journal and final snapshot to score then train', () => {
      const a = run(c, together);
      const b = run(c, apart);
      if (lifecycle) {
        expect(a.records.filter((r) => r.to === 'watched').length).toBeGreaterThan(0);
        expect(a.records.filter((r) => r.to === 'retired').length).toBeGreaterThan(0);
      } else expect(a.records.every((r) => r.to === 'active')).toBe(true);
      expect(a.trace.length).toBe(b.trace.length);
      const first = a.trace.findIndex((x, i) => !Object.is(x, b.trace[i]));
      expect(first, `verdict traces part at value ${first}`).toBe(-1);
      expect(bytes(b.trace).equals(bytes(a.trace))).toBe(true);
      expect(b.records).toEqual(a.records);
      expect(JSON.stringify(b.ensemble.snapshot())).toBe(JSON.stringify(a.ensemble.snapshot()));
    });

    it('is deterministic: the same seed gives the same verdicts, journal and snapshot; another seed does not', () => {
      const a = run(c, together, ROWS / 2);
      const b = run(c, together, ROWS / 2);
      expect(bytes(b.trace).equals(bytes(a.trace))).toBe(true);
      expect(b.records).toEqual(a.records);
      expect(JSON.stringify(b.ensemble.snapshot())).toBe(JSON.stringify(a.ensemble.snapshot()));
      expect(bytes(run(c, together, ROWS / 2, SEED + 1).trace).equals(bytes(a.trace))).toBe(false);
    });

    it('refuses a row with an infinite value, naming the feature, and learns nothing from it', () => {
      const { ensemble } = run(c, together, 500);
      const before = JSON.stringify(ensemble.snapshot());
      const row = Float64Array.of(Number.NaN, 4, 5, 6, Number.POSITIVE_INFINITY, 7);
      const v = new Verdict();
      expectShoalError(
        () => ensemble.scoreTrain(row, 2, 1, v),
        'invalid-row',
        /feature 2 .*offset 2 is Infinity/,
      );
      row[4] = Number.NEGATIVE_INFINITY;
      expectShoalError(() => ensemble.train(row, 2, 0), 'invalid-row', /feature 2 .*-Infinity/);
      expectShoalError(() => ensemble.score(row, 2, v), 'invalid-row', /feature 2 .*-Infinity/);
      expect(JSON.stringify(ensemble.snapshot())).toBe(before);
      ensemble.scoreTrain(row, 0, 1, v);
      expect(v.probabilities[0]! + v.probabilities[1]!).toBeCloseTo(1, 12);
    });

    it('restores from a JSON snapshot mid-run and ends identically', () => {
      const whole = run(c, together);
      const half = ROWS * 0.45;
      const records: LifecycleChange[] = [];
      const gen = stream();
      const first = createEnsemble(c.spec, gen.schema, SEED, (r) => records.push(r));
      const before = continueRun(first, gen, together, half);
      const saved = JSON.parse(JSON.stringify(first.snapshot())) as EnsembleSnapshot;
      const resumed = restoreEnsemble(saved, (r) => records.push(r));
      expect(JSON.stringify(resumed.snapshot())).toBe(JSON.stringify(first.snapshot()));
      const after = continueRun(resumed, gen, apart, ROWS - half);
      const trace = new Float64Array(before.length + after.length);
      trace.set(before);
      trace.set(after, before.length);
      expect(bytes(trace).equals(bytes(whole.trace))).toBe(true);
      expect(records).toEqual(whole.records);
      expect(JSON.stringify(resumed.snapshot())).toBe(JSON.stringify(whole.ensemble.snapshot()));
    });
  });
}
