import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import {
  createDetector,
  type DetectorSnapshot,
  type DetectorSpec,
  type DriftDetector,
  type DriftLevel,
  restoreDetector,
} from '../../src/drift/index.js';
import { expectShoalError } from './errors.js';

/**
 * The contract suite every drift detector passes (one suite, every implementation — see DEVELOPERS.md):
 * determinism, a JSON snapshot round trip that continues bit-identically, reset, the estimate as the
 * mean of the values it covers, bad parameters, bad input and bad snapshots.
 */
export interface DetectorCase {
  readonly spec: DetectorSpec;
  /** What the detector accepts: 0/1 errors only, values in [0, 1], or any finite value. */
  readonly domain: 'error' | 'unit' | 'real';
  /** Specs that must be refused, each with the parameter name the message must carry. */
  readonly badSpecs: readonly (readonly [DetectorSpec, string])[];
}

/**
 * A seeded stream in the detector's domain whose mean rises at 3,000 and falls at 9,000, so that every
 * detector meets a change (and its reset path) in the suite.
 */
function stream(domain: DetectorCase['domain'], seed: number, length: number): Float64Array {
  const rng = new Rng(seed);
  const out = new Float64Array(length);
  for (let t = 0; t < length; t++) {
    const level = t < 3000 ? 0.2 : t < 9000 ? 0.6 : 0.1;
    if (domain === 'error') out[t] = rng.next() < level ? 1 : 0;
    else if (domain === 'unit') out[t] = Math.min(1, Math.max(0, level + 0.2 * (rng.next() - 0.5)));
    else out[t] = 10 * level + rng.normal();
  }
  return out;
}

interface Trace {
  readonly levels: DriftLevel[];
  readonly estimates: Float64Array;
  readonly counts: Float64Array;
}

function trace(detector: DriftDetector, values: Float64Array, from = 0, to = values.length): Trace {
  const n = to - from;
  const out: Trace = { levels: new Array(n), estimates: new Float64Array(n), counts: new Float64Array(n) };
  for (let i = 0; i < n; i++) {
    out.levels[i] = detector.update(values[from + i]!);
    out.estimates[i] = detector.estimate;
    out.counts[i] = detector.count;
  }
  return out;
}

function expectSameTrace(a: Trace, b: Trace): void {
  expect(b.levels.join()).toBe(a.levels.join());
  expect(Buffer.from(b.estimates.buffer).equals(Buffer.from(a.estimates.buffer))).toBe(true);
  expect(Buffer.from(b.counts.buffer).equals(Buffer.from(a.counts.buffer))).toBe(true);
}

const roundTrip = (d: DriftDetector): DetectorSnapshot =>
  JSON.parse(JSON.stringify(d.snapshot())) as DetectorSnapshot;

export function describeDetectorContract(c: DetectorCase): void {
  const name = JSON.stringify(c.spec);
  describe(`${name} keeps the detector contract`, () => {
    it('is deterministic and meets the changes of the suite stream', () => {
      const values = stream(c.domain, 41, 15_000);
      const a = trace(createDetector(c.spec), values);
      const b = trace(createDetector(c.spec), values);
      expectSameTrace(a, b);
      expect(a.levels).toContain('drift');
      expect([...new Set(a.levels)].every((l) => ['stable', 'warning', 'drift'].includes(l))).toBe(true);
    });

    for (const at of [0, 137, 1000, 2500, 5000, 9500]) {
      it(`restores from a JSON snapshot taken after ${at} values and continues identically for 10,000`, () => {
        const values = stream(c.domain, 43, at + 10_000);
        const original = createDetector(c.spec);
        trace(original, values, 0, at);
        const copy = restoreDetector(roundTrip(original));
        expect(copy.kind).toBe(original.kind);
        expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(original.snapshot()));
        expectSameTrace(trace(original, values, at), trace(copy, values, at));
        expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(original.snapshot()));
      });
    }

    it('estimates the mean of the last `count` values (the error rate for 0/1 errors)', () => {
      const values = stream(c.domain, 47, 12_000);
      const prefix = new Float64Array(values.length + 1);
      for (let t = 0; t < values.length; t++) prefix[t + 1] = prefix[t]! + values[t]!;
      const detector = createDetector(c.spec);
      let worst = 0;
      let beyond = 0;
      for (let t = 0; t < values.length; t++) {
        detector.update(values[t]!);
        const k = detector.count;
        if (k > t + 1) beyond++;
        const mean = k > 0 ? (prefix[t + 1]! - prefix[t + 1 - k]!) / k : 0;
        worst = Math.max(worst, Math.abs(detector.estimate - mean));
      }
      expect(beyond).toBe(0);
      expect(worst).toBeLessThan(1e-9);
    });

    it('says the mean rose at the first alarm after the suite stream rises, before any reset', () => {
      const values = stream(c.domain, 43, 9000);
      const detector = createDetector(c.spec);
      expect(detector.shift).toBeNull();
      let t = 3000;
      for (let i = 0; i < 3000; i++) detector.update(values[i]!);
      while (t < 9000 && detector.update(values[t]!) !== 'drift') t++;
      expect(t).toBeLessThan(9000);
      expect(detector.shift).toBe('rise');
      // The estimate at the alarm is the risen level (0.6 in the stream), not the one after a reset.
      expect(detector.alarmEstimate).toBeGreaterThan(c.domain === 'real' ? 2 : 0.2);
    });

    it('forgets everything on reset', () => {
      const values = stream(c.domain, 53, 8000);
      const used = createDetector(c.spec);
      trace(used, values, 0, 4000);
      used.reset();
      expect(used.count).toBe(0);
      expect(used.estimate).toBe(0);
      expect(JSON.stringify(used.snapshot())).toBe(JSON.stringify(createDetector(c.spec).snapshot()));
      expectSameTrace(trace(createDetector(c.spec), values, 4000), trace(used, values, 4000));
    });

    it('refuses bad parameters with a ShoalError naming the parameter', () => {
      for (const [spec, parameter] of c.badSpecs) {
        expectShoalError(() => createDetector(spec), 'invalid-parameter', new RegExp(parameter));
      }
    });

    it('refuses values outside its domain with a ShoalError', () => {
      const bad = [Number.NaN, Number.POSITIVE_INFINITY];
      if (c.domain !== 'real') bad.push(-0.1, 1.5);
      if (c.domain === 'error') bad.push(0.5);
      const detector = createDetector(c.spec);
      for (const value of bad) expectShoalError(() => detector.update(value), 'invalid-input', /got/);
      expect(detector.count).toBe(0);
    });

    it('refuses a snapshot of another kind, another version or with a damaged state', () => {
      const detector = createDetector(c.spec);
      trace(detector, stream(c.domain, 59, 500));
      const snapshot = roundTrip(detector);
      expectShoalError(() => restoreDetector({ ...snapshot, kind: 'nope' }), 'invalid-snapshot', /nope/);
      expectShoalError(() => restoreDetector({ ...snapshot, version: 99 }), 'invalid-snapshot', /99/);
      expectShoalError(() => restoreDetector({ ...snapshot, state: {} }), 'invalid-snapshot', /state/);
      const [badSpec, parameter] = c.badSpecs[0]!;
      const { kind: _kind, ...badOptions } = badSpec;
      expectShoalError(
        () => restoreDetector({ ...snapshot, options: { ...snapshot.options, ...badOptions } }),
        'invalid-parameter',
        new RegExp(parameter),
      );
    });
  });
}
