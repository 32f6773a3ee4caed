import { describe, expect, it } from 'vitest';
import { checkSnapshot, numericSchema } from '../../src/core/index.js';
import { createDetector, restoreDetector } from '../../src/drift/index.js';
import { ClassificationEvaluator } from '../../src/evaluation/index.js';
import { createClassifier, restoreClassifier } from '../../src/learners/index.js';
import { sea } from '../../src/streams/index.js';
import { expectShoalError } from '../support/errors.js';

describe('the snapshot envelope', () => {
  it('accepts an envelope of the expected kind and version', () => {
    expect(() => checkSnapshot({ kind: 'x', version: 2, state: {} }, 'x', 2)).not.toThrow();
    expect(() => checkSnapshot({ kind: 'x', version: 2, options: {}, state: 'AAAA' }, 'x', 2)).not.toThrow();
  });

  it('refuses anything else, saying what was expected and what arrived', () => {
    expectShoalError(
      () => checkSnapshot(null, 'x', 1),
      'invalid-snapshot',
      /expected a x snapshot, got null/,
    );
    expectShoalError(() => checkSnapshot([], 'x', 1), 'invalid-snapshot', /got an array/);
    expectShoalError(() => checkSnapshot('x', 'x', 1), 'invalid-snapshot', /got string/);
    expectShoalError(
      () => checkSnapshot({ kind: 'y', version: 1, state: {} }, 'x', 1),
      'invalid-snapshot',
      /got y/,
    );
    expectShoalError(
      () => checkSnapshot({ kind: 'x', version: 3, state: {} }, 'x', 1),
      'invalid-snapshot',
      /format version 3; this build reads version 1/,
    );
    expectShoalError(() => checkSnapshot({ kind: 'x', version: 1 }, 'x', 1), 'invalid-snapshot', /no state/);
    expectShoalError(
      () => checkSnapshot({ kind: 'x', version: 1, state: null }, 'x', 1),
      'invalid-snapshot',
      /no state/,
    );
    expectShoalError(
      () => checkSnapshot({ kind: 'x', version: 1, options: 7, state: {} }, 'x', 1),
      'invalid-snapshot',
      /options: expected an object, got 7/,
    );
  });

  it('is the one shape of learners, detectors, evaluators and generators', () => {
    const schema = numericSchema(3);
    const envelopes = [
      createClassifier({ kind: 'naive-bayes' }, schema, 1).snapshot(),
      createDetector({ kind: 'ddm' }).snapshot(),
      new ClassificationEvaluator({ window: 10 }).snapshot(),
      sea({}, 1).snapshot(),
    ];
    for (const e of envelopes) {
      expect(typeof e.kind).toBe('string');
      expect(Number.isInteger(e.version)).toBe(true);
      expect(e.state).toBeDefined();
      expect(() => checkSnapshot(e, e.kind, e.version)).not.toThrow();
    }
    expect(restoreClassifier(JSON.parse(JSON.stringify(envelopes[0])))).toBeDefined();
    expect(restoreDetector(JSON.parse(JSON.stringify(envelopes[1])))).toBeDefined();
  });
});
