import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { deriveSeed, Rng } from '../../src/core/index.js';

describe('Rng', () => {
  it('repeats a sequence for the same seed and differs for another', () => {
    const a = new Rng(7);
    const b = new Rng(7);
    const c = new Rng(8);
    const xs = Array.from({ length: 100 }, () => a.next());
    expect(Array.from({ length: 100 }, () => b.next())).toEqual(xs);
    expect(Array.from({ length: 100 }, () => c.next())).not.toEqual(xs);
    for (const x of xs) expect(x >= 0 && x < 1).toBe(true);
  });

  it('resumes exactly from a JSON round trip of its state, including a pending normal deviate', () => {
    const a = new Rng('x');
    a.normal();
    const saved = JSON.parse(JSON.stringify(a.state()));
    const b = Rng.fromState(saved);
    for (let i = 0; i < 100; i++) {
      expect(b.normal()).toBe(a.normal());
      expect(b.next()).toBe(a.next());
    }
  });

  it('refuses a corrupt state, naming the field', () => {
    expect(() => Rng.fromState({ c: 1, s0: Number.NaN, s1: 0, s2: 0, spare: null })).toThrow(/s0/);
  });

  it('draws standard normal deviates (mean 0, variance 1 within 5 standard errors)', () => {
    const rng = new Rng(1);
    const n = 100_000;
    let s = 0;
    let s2 = 0;
    for (let i = 0; i < n; i++) {
      const z = rng.normal();
      s += z;
      s2 += z * z;
    }
    expect(Math.abs(s / n)).toBeLessThan(5 / Math.sqrt(n));
    // Var of the sample second moment of N(0,1) is 2/n (from memory: E z^4 = 3).
    expect(Math.abs(s2 / n - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
  });

  it('derives distinct, stable seeds for sub-components', () => {
    expect(deriveSeed(1, 'member', 3)).toBe('1/member/3');
    expect(new Rng(deriveSeed(1, 'member', 3)).next()).not.toBe(new Rng(deriveSeed(1, 'member', 4)).next());
  });
});

describe('Rng against seedrandom', () => {
  it('draws exactly the sequence of seedrandom.alea for the same seed', () => {
    // Outside reference: npm `seedrandom` 3.0.5, alea.js (Baagøe's Alea).
    for (const seed of [0, 42, 'shoal', 'member/7']) {
      const reference = seedrandom.alea(String(seed));
      const ours = new Rng(seed);
      for (let i = 0; i < 10_000; i++) expect(ours.next()).toBe(reference());
    }
  });
});
