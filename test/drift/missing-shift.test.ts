import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { MissingShifts } from '../../src/drift/missing-shift.js';

/** One feature's watch fed one value at a time: true when the missing share moved. */
function watchOf(window: number, delta: number) {
  const watches = new MissingShifts(1, window, delta);
  const value = new Float64Array(1);
  const marks = new Uint8Array(1);
  return {
    watches,
    update(missing: boolean): boolean {
      value[0] = missing ? Number.NaN : 0;
      marks[0] = 0;
      watches.column(0, value, 0, 1, 1, marks, 0, 1);
      return marks[0] === 1;
    },
  };
}

describe('the missing-share watch', () => {
  it('stays quiet on a stationary share and flags a jump once, soon after it', () => {
    // Hoeffding 1963: with δ = 1e-9 per test, 100 streams of 20,000 rows should raise no false alarm.
    let falseAlarms = 0;
    const delays: number[] = [];
    for (let s = 0; s < 100; s++) {
      const rng = new Rng(`missing/${s}`);
      const watch = watchOf(500, 1e-9);
      let flags = 0;
      for (let i = 0; i < 20_000; i++) {
        const share = i < 10_000 ? 0.1 : 0.9;
        if (watch.update(rng.next() < share)) {
          if (i < 10_000) falseAlarms++;
          else if (flags++ === 0) delays.push(i - 10_000);
        }
      }
      expect(flags).toBe(1);
    }
    expect(falseAlarms).toBe(0);
    expect(Math.max(...delays)).toBeLessThan(500);
  });

  it('resumes from its state exactly', () => {
    const a = watchOf(50, 1e-6);
    for (let i = 0; i < 120; i++) a.update(i % 7 === 0);
    const b = watchOf(50, 1e-6);
    b.watches.load(0, JSON.parse(JSON.stringify(a.watches.stateOf(0))));
    for (let i = 0; i < 400; i++) expect(b.update(i > 100)).toBe(a.update(i > 100));
  });
});
