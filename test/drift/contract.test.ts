import { describe, expect, it } from 'vitest';
import { ShoalError } from '../../src/core/index.js';
import { createDetector, DETECTOR_KINDS, type DetectorSpec } from '../../src/drift/index.js';
import { type DetectorCase, describeDetectorContract } from '../support/detector-contract.js';

/** Every detector kind, and the variants that take other code paths, through the one contract suite. */
const cases: readonly DetectorCase[] = [
  {
    spec: { kind: 'adwin' },
    domain: 'unit',
    badSpecs: [
      [{ kind: 'adwin', delta: 0 }, 'delta'],
      [{ kind: 'adwin', delta: 1 }, 'delta'],
      [{ kind: 'adwin', warningDelta: 1.5 }, 'warningDelta'],
      [{ kind: 'adwin', delta: 0.05, warningDelta: 0.01 }, 'warningDelta'],
      [{ kind: 'adwin', checkEvery: 0 }, 'checkEvery'],
      [{ kind: 'adwin', bucketsPerSize: 0 }, 'bucketsPerSize'],
      [{ kind: 'adwin', bucketsPerSize: 2.5 }, 'bucketsPerSize'],
      [{ kind: 'adwin', bound: 'chebyshev' } as unknown as DetectorSpec, 'bound'],
    ],
  },
  {
    spec: { kind: 'adwin', bound: 'hoeffding', checkEvery: 1, bucketsPerSize: 2 },
    domain: 'unit',
    badSpecs: [[{ kind: 'adwin', bound: 'hoeffding', delta: -0.1 }, 'delta']],
  },
  {
    spec: { kind: 'ddm' },
    domain: 'error',
    badSpecs: [
      [{ kind: 'ddm', minCount: 0 }, 'minCount'],
      [{ kind: 'ddm', warningFactor: -2 }, 'warningFactor'],
      [{ kind: 'ddm', driftFactor: 1.5 }, 'driftFactor'],
    ],
  },
  {
    spec: { kind: 'eddm' },
    domain: 'error',
    badSpecs: [
      [{ kind: 'eddm', warningRatio: 1 }, 'warningRatio'],
      [{ kind: 'eddm', driftRatio: 0 }, 'driftRatio'],
      [{ kind: 'eddm', driftRatio: 0.97 }, 'driftRatio'],
      [{ kind: 'eddm', minErrors: 0 }, 'minErrors'],
    ],
  },
  {
    spec: { kind: 'page-hinkley' },
    domain: 'real',
    badSpecs: [
      [{ kind: 'page-hinkley', lambda: -1 }, 'lambda'],
      [{ kind: 'page-hinkley', lambda: 0 }, 'lambda'],
      [{ kind: 'page-hinkley', delta: -0.1 }, 'delta'],
      [{ kind: 'page-hinkley', fading: 0 }, 'fading'],
      [{ kind: 'page-hinkley', fading: 1.1 }, 'fading'],
      [{ kind: 'page-hinkley', direction: 'sideways' } as unknown as DetectorSpec, 'direction'],
      [{ kind: 'page-hinkley', minCount: 0 }, 'minCount'],
    ],
  },
  {
    spec: { kind: 'page-hinkley', direction: 'both', fading: 0.999, lambda: 20 },
    domain: 'real',
    badSpecs: [[{ kind: 'page-hinkley', direction: 'both', lambda: -5 }, 'lambda']],
  },
  {
    spec: { kind: 'hddm-a' },
    domain: 'unit',
    badSpecs: [
      [{ kind: 'hddm-a', alphaD: 0 }, 'alphaD'],
      [{ kind: 'hddm-a', alphaW: 1 }, 'alphaW'],
      [{ kind: 'hddm-a', alphaD: 0.01, alphaW: 0.005 }, 'alphaW'],
    ],
  },
];

for (const c of cases) describeDetectorContract(c);

describe('the detector registry', () => {
  it('covers every kind in DETECTOR_KINDS with the contract suite', () => {
    expect(new Set(cases.map((c) => c.spec.kind))).toEqual(new Set(DETECTOR_KINDS));
  });

  it('refuses an unknown kind', () => {
    expect(() => createDetector({ kind: 'cusum' } as unknown as DetectorSpec)).toThrow(ShoalError);
    expect(() => createDetector({ kind: 'cusum' } as unknown as DetectorSpec)).toThrow(/cusum/);
  });
});
