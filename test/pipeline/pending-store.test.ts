import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { Verdict } from '../../src/ensembles/index.js';
import { GONE_EXPIRED, type PendingSnapshot, PendingStore } from '../../src/pipeline/pending-store.js';

const WIDTH = 3;

/** One seeded step of a store's life: put, join, a label looked up, an expiry; returns what it saw. */
function step(store: PendingStore, rng: Rng, i: number, verdict: Verdict): string {
  const row = Float64Array.from({ length: WIDTH }, () => rng.next());
  const p = verdict.fit(2);
  p[0] = rng.next();
  p[1] = 1 - p[0];
  verdict.predicted = p[0] > 0.5 ? 0 : 1;
  verdict.epoch = i >> 6;
  const roll = rng.next();
  const id = `e${Math.floor(rng.next() * (i + 1))}`;
  if (roll < 0.55) return `put ${store.put(`e${i}`, row, 0, verdict, i)}`;
  if (roll < 0.8) {
    const slot = store.find(id);
    if (slot < 0) return `fate ${id} ${store.fate(id)}`;
    const seen = `${store.predictedOf(slot)} ${store.epochOf(slot)} ${store.timeOf(slot)} ${store.probability(slot, 1)} ${store.rows[store.offsetOf(slot)]}`;
    store.joined(slot);
    return `joined ${id} ${seen}`;
  }
  if (roll < 0.9) return `settled ${store.settled(`s${i}`)}`;
  return `expired ${store.expire(i - 40)}`;
}

function roundTrip(store: PendingStore): PendingStore {
  return PendingStore.restore(JSON.parse(JSON.stringify(store.snapshot())) as PendingSnapshot);
}

describe('the pending store snapshot', () => {
  it('keeps only the live entries: a nearly empty store of 100,000 slots makes a small snapshot', () => {
    const store = new PendingStore(100_000, 8, 2);
    const verdict = new Verdict();
    verdict.fit(2);
    for (let i = 0; i < 10; i++) store.put(`e${i}`, new Float64Array(8).fill(i), 0, verdict, i);
    store.joined(store.find('e3'));
    const text = JSON.stringify(store.snapshot());
    // 9 waiting rows of 8 doubles and 2 probabilities, 1 remembered id: well under 2 kB, where the whole
    // preallocated capacity would take over 10 MB of base64.
    expect(text.length).toBeLessThan(2000);
    const back = roundTrip(store);
    expect(back.capacity).toBe(100_000);
    expect(back.size).toBe(9);
    expect(back.fate('e3')).toBe(1);
    expect(back.rows[back.offsetOf(back.find('e7'))]).toBe(7);
    expect(JSON.stringify(back.snapshot())).toBe(text);
  });

  it('restores exactly: a store cut at any point and restored goes on as the uninterrupted one', () => {
    const capacity = 64;
    const steps = 2000;
    const whole = new PendingStore(capacity, WIDTH, 2);
    const rng = new Rng(11);
    const verdict = new Verdict();
    const seen = Array.from({ length: steps }, (_, i) => step(whole, rng, i, verdict));
    // The run wraps the ring many times, evicts, expires and remembers shadowed ids.
    expect(seen.some((s) => s === `put 3`)).toBe(true);
    expect(seen.some((s) => s.startsWith('expired') && s !== 'expired 0')).toBe(true);
    expect(seen.some((s) => s.endsWith(` ${GONE_EXPIRED}`) && s.startsWith('fate'))).toBe(true);
    for (const cut of [1, 97, 640, 1333]) {
      let store = new PendingStore(capacity, WIDTH, 2);
      const r = new Rng(11);
      const again: string[] = [];
      for (let i = 0; i < steps; i++) {
        if (i === cut) {
          const before = JSON.stringify(store.snapshot());
          store = roundTrip(store);
          expect(JSON.stringify(store.snapshot())).toBe(before);
        }
        again.push(step(store, r, i, verdict));
      }
      expect(again).toEqual(seen);
      expect(JSON.stringify(store.snapshot())).toBe(JSON.stringify(whole.snapshot()));
    }
  });

  it('refuses an entry outside the ring or a slot given twice, naming the entry', () => {
    const store = new PendingStore(8, 1, 2);
    const verdict = new Verdict();
    verdict.fit(2);
    store.put('a', new Float64Array(1), 0, verdict, 0);
    store.put('b', new Float64Array(1), 0, verdict, 0);
    const s = store.snapshot();
    const twice = { ...s, ids: ['a', 'a'] };
    expect(() => PendingStore.restore(twice)).toThrow(/pending store snapshot: entry 1/);
    expect(() => PendingStore.restore({ ...s, used: 1 })).toThrow(/entry 1 \(slot 1\)/);
    expect(() => PendingStore.restore({ ...s, goneWhy: [9] })).toThrow(/goneWhy holds 1 values, expected 0/);
  });
});
