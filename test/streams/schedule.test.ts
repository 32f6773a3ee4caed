import { describe, expect, it } from 'vitest';
import { deriveSeed, ShoalError } from '../../src/core/index.js';
import {
  buildStream,
  conceptSchedule,
  newConceptShare,
  sea,
  sine,
  stagger,
  take,
} from '../../src/streams/index.js';
import { note } from '../support/note.js';
import { expectShare } from './sampling.js';

/**
 * The sigmoid concept join of Bifet et al., "New ensemble methods for evolving data streams", KDD 2009
 * (PUBLISHED.md, from memory): row t comes from the new concept with probability 1/(1 + e^(−4(t − t₀)/W));
 * [derived] 0.5 at t₀, 0.880797 at t₀ + W/2, 0.982014 at t₀ + W.
 */
describe('newConceptShare', () => {
  it('matches the published derived values', () => {
    const t0 = 10_000;
    const w = 1000;
    expect(newConceptShare(t0, t0, w)).toBe(0.5);
    expect(newConceptShare(t0 + w / 2, t0, w)).toBeCloseTo(0.880797, 6);
    expect(newConceptShare(t0 + w, t0, w)).toBeCloseTo(0.982014, 6);
    expect(newConceptShare(t0 - w / 2, t0, w)).toBeCloseTo(1 - 0.880797, 6);
    expect(newConceptShare(t0 - 1, t0, 0)).toBe(0);
    expect(newConceptShare(t0, t0, 0)).toBe(1);
  });
});

describe('concept schedule', () => {
  it('draws the share of new-concept rows the sigmoid prescribes around each change point', () => {
    // Alternating concepts, a change every 100 rows, W = 20: 40,000 changes, so each offset from a change
    // point is sampled 40,000 times; the next change is 4W away and shifts the shares by < 1e-6.
    const every = 100;
    const width = 20;
    const changes = 40_000;
    const schedule = buildStream({
      generator: 'sine',
      concepts: Array.from({ length: changes + 1 }, (_, k) => (k % 2 === 0 ? 'sine1' : 'sine1-reversed')),
      every,
      width,
      seed: 81,
    });
    const offsets = [-10, 0, 10, 20] as const;
    const hits = new Map<number, number>(offsets.map((d) => [d, 0]));
    const row = new Float64Array(2);
    for (let t = 0; t < changes * every + 50; t++) {
      schedule.next(row, 0);
      const k = Math.round(t / every);
      const d = t - k * every;
      if (k >= 1 && k <= changes && hits.has(d) && schedule.lastTurn === k) hits.set(d, hits.get(d)! + 1);
    }
    for (const d of offsets) {
      expectShare(
        `new-concept share at t₀${d >= 0 ? '+' : ''}${d} (W = ${width})`,
        hits.get(d)! / changes,
        newConceptShare(d, 0, width),
        changes,
      );
    }
  });

  it('changes abruptly with width 0 and lets a recurring concept resume its own stream', () => {
    // a, b, a, c: turns 0 and 2 come from one generator, seeded deriveSeed(seed, 'concept', name).
    const every = 500;
    const schedule = buildStream({
      generator: 'sea',
      concepts: '8,9,8,7',
      every,
      width: 0,
      noise: 0,
      seed: 82,
    });
    expect(schedule.changePoints).toEqual([500, 1000, 1500]);
    expect(schedule.sequence).toEqual(['8', '9', '8', '7']);
    const mixed = { rows: new Float64Array(2500 * 3), labels: new Int32Array(2500) };
    const turns: number[] = [];
    for (let t = 0; t < 2500; t++) {
      mixed.labels[t] = schedule.next(mixed.rows, t * 3);
      turns.push(schedule.lastTurn);
    }
    expect(turns).toEqual(Array.from({ length: 2500 }, (_, t) => Math.min(3, Math.floor(t / every))));
    const alone = take(sea({ threshold: 8, noise: 0 }, deriveSeed(82, 'concept', '8')), 1000);
    expect(Array.from(mixed.rows.subarray(0, 1500))).toEqual(Array.from(alone.rows.subarray(0, 1500)));
    expect(Array.from(mixed.rows.subarray(3000, 4500))).toEqual(Array.from(alone.rows.subarray(1500, 3000)));
    expect(schedule.rows).toBe(2500);
    // Each turn labels by its own threshold.
    for (let t = 0; t < 2500; t++) {
      const theta = [8, 9, 8, 7][turns[t]!]!;
      const expected = mixed.rows[t * 3]! + mixed.rows[t * 3 + 1]! <= theta ? 1 : 0;
      if (mixed.labels[t] !== expected) expect.fail(`row ${t}: label ${mixed.labels[t]} under θ = ${theta}`);
    }
  });

  it('keeps a concept’s rows independent of the other concepts in the list', () => {
    const a = take(buildStream({ generator: 'stagger', concepts: 'a,b', every: 300, seed: 83 }), 300);
    const b = take(buildStream({ generator: 'stagger', concepts: 'a,c,b', every: 300, seed: 83 }), 300);
    expect(Array.from(a.rows)).toEqual(Array.from(b.rows));
  });

  it('restores mid-transition with the row counter and every concept’s state', () => {
    const make = () =>
      buildStream({ generator: 'sea', concepts: '8,9,8', every: 1000, width: 400, seed: 84 });
    const s = make();
    take(s, 1100);
    const saved = JSON.parse(JSON.stringify(s.snapshot()));
    const extra = saved.state.extra as { row: number; concepts: unknown[] };
    expect(extra.row).toBe(1100);
    expect(extra.concepts).toHaveLength(2);
    const ahead = take(s, 1500);
    const t = make();
    t.restore(saved);
    expect(t.rows).toBe(1100);
    const again = take(t, 1500);
    expect(Buffer.from(again.rows.buffer).equals(Buffer.from(ahead.rows.buffer))).toBe(true);
    note(`schedule state at row 1100: ${JSON.stringify(saved).length} bytes of JSON`);
  });

  it('leaves itself unchanged when one concept refuses its part of a state', () => {
    const make = () =>
      buildStream({ generator: 'hyperplane', concepts: '0.001,0.01,0.001', every: 500, seed: 85 });
    const s = make();
    const twin = make();
    take(s, 300);
    const good = s.snapshot(); // an earlier state: restoring any part of it would rewind that concept
    take(s, 400);
    take(twin, 700);
    type Part = { state: { rng: unknown; extra: Record<string, unknown> } };
    const concepts = (good.state.extra as { concepts: Part[] }).concepts;
    const broken = { ...concepts[1]!, state: { ...concepts[1]!.state, extra: { weights: 'AAAA' } } };
    const corrupt = {
      ...good,
      state: { ...good.state, extra: { ...(good.state.extra as object), concepts: [concepts[0], broken] } },
    };
    expect(() => s.restore(corrupt as typeof good)).toThrow(ShoalError);
    const a = take(s, 1000);
    const b = take(twin, 1000);
    expect(Buffer.from(a.rows.buffer).equals(Buffer.from(b.rows.buffer))).toBe(true);
  });

  it('refuses concepts on different schemas, unknown or duplicated names and a missing period', () => {
    const fail = (fn: () => unknown, pattern: RegExp) => {
      let thrown: unknown;
      try {
        fn();
      } catch (e) {
        thrown = e;
      }
      expect(thrown).toBeInstanceOf(ShoalError);
      expect((thrown as ShoalError).code).toBe('invalid-parameter');
      expect((thrown as ShoalError).message).toMatch(pattern);
    };
    const s8 = { name: '8', generator: sea({}, 1) };
    const sa = { name: 'a', generator: stagger({}, 1) };
    fail(
      () => conceptSchedule({ concepts: [s8, sa], sequence: ['8', 'a'], every: 10 }, 1),
      /concepts\[1\].*schema/,
    );
    fail(
      () => conceptSchedule({ concepts: [s8], sequence: ['8', '9'], every: 10 }, 1),
      /sequence\[1\]: unknown concept '9'/,
    );
    fail(() => conceptSchedule({ concepts: [s8, s8], sequence: ['8'] }, 1), /concepts\[1\].*twice/);
    fail(() => conceptSchedule({ concepts: [s8], sequence: ['8', '8'] }, 1), /every/);
    fail(() => conceptSchedule({ concepts: [s8], sequence: ['8', '8'], every: 0 }, 1), /every/);
    fail(() => conceptSchedule({ concepts: [s8], sequence: ['8'], width: -1 }, 1), /width/);
    fail(() => conceptSchedule({ concepts: [], sequence: ['8'] }, 1), /concepts/);
    fail(() => conceptSchedule({ concepts: [s8], sequence: [] }, 1), /sequence/);
    const s1 = { name: 'sine1', generator: sine({}, 1) };
    expect(conceptSchedule({ concepts: [s1], sequence: ['sine1'] }, 1).changePoints).toEqual([]);
  });
});
