import { describe, expect, it } from 'vitest';
import { ShoalError } from '../../src/core/index.js';
import {
  agrawal,
  buildStream,
  type GeneratorSnapshot,
  hyperplane,
  led,
  rbf,
  type StreamGenerator,
  sea,
  sine,
  stagger,
  take,
} from '../../src/streams/index.js';

/**
 * The generator contract, run against every generator and every schedule: same seed → bit-identical
 * rows and labels; a JSON round trip of the state resumes the exact stream, in the same instance or in a
 * freshly built one.
 */
const CASES: readonly [string, (seed: number) => StreamGenerator][] = [
  ['sea', (s) => sea({ threshold: 9, noise: 0.1 }, s)],
  ['stagger', (s) => stagger({ concept: 'b', noise: 0.05 }, s)],
  ['led', (s) => led({ drifting: 2, irrelevant: 5 }, s)],
  ['agrawal', (s) => agrawal({ fn: 10, perturbation: 0.05, noise: 0.05 }, s)],
  ['hyperplane', (s) => hyperplane({ magnitude: 0.01, drifting: 4, period: 3 }, s)],
  ['rbf', (s) => rbf({ features: 5, classes: 4, centroids: 20, drifting: 7, speed: 0.01, noise: 0.1 }, s)],
  ['sine', (s) => sine({ curve: 'sine2', reversed: true, noise: 0.1 }, s)],
  [
    'schedule: sea 8,9,8,7 sigmoid',
    (s) => buildStream({ generator: 'sea', concepts: '8,9,8,7', every: 700, width: 300, seed: s }),
  ],
  [
    'schedule: stagger a,b,c abrupt',
    (s) => buildStream({ generator: 'stagger', concepts: 'a,b,c', every: 500, seed: s }),
  ],
  [
    'schedule: hyperplane 0.001,0.01,0.001',
    (s) =>
      buildStream({ generator: 'hyperplane', concepts: '0.001,0.01,0.001', every: 600, width: 100, seed: s }),
  ],
  [
    'schedule: rbf 0,0.01',
    (s) =>
      buildStream({
        generator: 'rbf',
        concepts: '0,0.01',
        every: 800,
        width: 200,
        seed: s,
        options: { centroids: 10 },
      }),
  ],
  [
    'schedule: agrawal 1..10',
    (s) =>
      buildStream({ generator: 'agrawal', concepts: '1,2,3,4,5,6,7,8,9,10', every: 200, width: 50, seed: s }),
  ],
  [
    'schedule: sine all',
    (s) =>
      buildStream({
        generator: 'sine',
        concepts: 'sine1,sine2,sine1-reversed,sine2-reversed',
        every: 500,
        width: 80,
        seed: s,
      }),
  ],
  [
    'schedule: led 0,3,7',
    (s) => buildStream({ generator: 'led', concepts: '0,3,7', every: 400, width: 60, seed: s }),
  ],
];

function same(a: ReturnType<typeof take>, b: ReturnType<typeof take>): boolean {
  return (
    Buffer.from(a.rows.buffer).equals(Buffer.from(b.rows.buffer)) &&
    Buffer.from(a.labels.buffer).equals(Buffer.from(b.labels.buffer))
  );
}

describe.each(CASES)('%s keeps the generator contract', (_name, make) => {
  it('gives bit-identical rows and labels for the same seed, and others for another seed', () => {
    expect(same(take(make(3), 3000), take(make(3), 3000))).toBe(true);
    expect(same(take(make(3), 3000), take(make(4), 3000))).toBe(false);
  });

  it('resumes bit-identically from a JSON round trip of its state, in place and in a new instance', () => {
    const gen = make(5);
    take(gen, 1234);
    const saved = JSON.parse(JSON.stringify(gen.snapshot())) as GeneratorSnapshot;
    const ahead = take(gen, 2000);
    gen.restore(saved);
    expect(same(take(gen, 2000), ahead)).toBe(true);
    const fresh = make(99);
    fresh.restore(saved);
    expect(same(take(fresh, 2000), ahead)).toBe(true);
  });

  it('refuses a corrupt state with invalid-snapshot', () => {
    const gen = make(6);
    const good = gen.snapshot();
    const state = good.state;
    const bad: GeneratorSnapshot[] = [
      { ...good, state: { ...state, rng: { ...state.rng, s0: Number.NaN } } },
      { ...good, kind: 'another' },
      { ...good, version: 99 },
    ];
    if (state.extra !== undefined) {
      bad.push(
        { ...good, state: { ...state, extra: 'nonsense' } },
        { ...good, state: { ...state, extra: {} } },
      );
    }
    for (const snapshot of bad) {
      let thrown: unknown;
      try {
        gen.restore(snapshot);
      } catch (e) {
        thrown = e;
      }
      expect(thrown).toBeInstanceOf(ShoalError);
      expect((thrown as ShoalError).code).toBe('invalid-snapshot');
    }
  });
});
