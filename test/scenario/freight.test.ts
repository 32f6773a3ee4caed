import { describe, expect, it } from 'vitest';
import {
  CARRIERS,
  driftRows,
  FIRMWARE,
  FREIGHT_SCHEMA,
  FreightScenario,
  PRODUCT_CLASSES,
} from '../../src/scenario/index.js';

/**
 * The demo scenario's own definitions (src/scenario/freight.ts): what each scripted drift does and at
 * which row, the late labels' timing, and seeded determinism. The scenario is invented, so these check
 * the generator against its documented script, not against a published source.
 */

const LENGTH = 20_000;
const WIDTH = FREIGHT_SCHEMA.features.length;
const col = (name: string): number => FREIGHT_SCHEMA.features.findIndex((f) => f.name === name);
const PRODUCT = col('product_class');
const CARRIER = col('carrier');
const FW = col('sensor_firmware');
const MEAN = col('box_temp_mean');
const SETPOINT = col('setpoint');
const AMBIENT = col('ambient_temp');
const DOOR_MINUTES = col('door_open_minutes');
const SEAFOOD = PRODUCT_CLASSES.indexOf('seafood');
const NEW_CARRIER = CARRIERS.indexOf('Brisk Badger Logistics');

interface Legs {
  readonly rows: Float64Array;
  readonly labels: Int8Array;
  readonly times: Float64Array;
  readonly labelTimes: Float64Array;
  readonly ids: string[];
}

/** The first `length` legs of a scenario of LENGTH rows. */
function draw(seed: number, length = LENGTH): Legs {
  const s = new FreightScenario(seed, { length: LENGTH });
  const rows = new Float64Array(length * WIDTH);
  const labels = new Int8Array(length);
  const times = new Float64Array(length);
  const labelTimes = new Float64Array(length);
  const ids: string[] = [];
  for (let i = 0; i < length; i++) {
    labels[i] = s.next(rows, i * WIDTH);
    times[i] = s.leg.time;
    labelTimes[i] = s.leg.labelTime;
    ids.push(s.leg.id);
  }
  return { rows, labels, times, labelTimes, ids };
}

/** Mean of `f(row)` over rows [from, to) where `keep(row)` holds, with the count. */
function mean(
  from: number,
  to: number,
  f: (i: number) => number,
  keep: (i: number) => boolean = () => true,
): { mean: number; n: number } {
  let sum = 0;
  let n = 0;
  for (let i = from; i < to; i++) {
    if (!keep(i)) continue;
    sum += f(i);
    n++;
  }
  return { mean: sum / n, n };
}

const legs = draw(7);
const at = driftRows(LENGTH);
const v = (i: number, c: number): number => legs.rows[i * WIDTH + c]!;

describe('freight scenario', () => {
  it('states the script at shares of its length', () => {
    expect([...at]).toEqual([
      ['seafood-rule', 6000],
      ['heat-wave', 8000],
      ['firmware', 12000],
      ['new-carrier', 16000],
    ]);
  });

  it('the stricter seafood rule rejects most seafood from its row on, and leaves other classes alone', () => {
    const d = at.get('seafood-rule')!;
    const isSeafood = (i: number) => v(i, PRODUCT) === SEAFOOD;
    const before = mean(2000, d, (i) => legs.labels[i]!, isSeafood);
    const after = mean(d, d + 2000, (i) => legs.labels[i]!, isSeafood);
    expect(before.mean).toBeLessThan(0.4);
    expect(after.mean).toBeGreaterThan(0.85);
    const others = (i: number) => v(i, PRODUCT) !== SEAFOOD;
    const o1 = mean(2000, d, (i) => legs.labels[i]!, others).mean;
    const o2 = mean(d, d + 2000, (i) => legs.labels[i]!, others).mean;
    expect(Math.abs(o2 - o1)).toBeLessThan(0.05);
  });

  it('the heat wave ramps up to 9 °C from 40% to 55%, holds to 70% and is gone by 90%', () => {
    const s = new FreightScenario(7, { length: LENGTH });
    expect(s.heatAt(8000)).toBe(0);
    expect(s.heatAt(9500)).toBeCloseTo(4.5, 9);
    expect(s.heatAt(11_000)).toBe(9);
    expect(s.heatAt(14_000)).toBe(9);
    expect(s.heatAt(18_000)).toBe(0);
    const calm = mean(2000, 8000, (i) => v(i, AMBIENT)).mean;
    const hot = mean(11_000, 14_000, (i) => v(i, AMBIENT)).mean;
    // Ambient noise has sd 4 °C: 3,000 legs put the mean within ±0.3 °C.
    expect(hot - calm).toBeGreaterThan(8.4);
    expect(hot - calm).toBeLessThan(9.6);
  });

  it('the firmware update switches every leg at its row; readings look as before while far fewer loads are rejected', () => {
    const d = at.get('firmware')!;
    for (let i = 0; i < LENGTH; i++) expect(v(i, FW)).toBe(i < d ? 0 : 1);
    expect(FIRMWARE[1]).toBe('thermo-ox 3.0');
    // Same stretch of the heat wave (its plateau) on both sides, so only the sensor changed: the
    // controller holds each reading at the setpoint, so the readings' excess stays where it was ...
    const excess = (i: number) => v(i, MEAN) - v(i, SETPOINT);
    const before = mean(11_000, d, excess).mean;
    const after = mean(d, 14_000, excess).mean;
    expect(Math.abs(before - after)).toBeLessThan(0.2);
    // ... while the air is 3–4 °C colder: the same readings now go with accepted loads (seed 7: 64% of
    // the legs reading 1.5–3 °C above setpoint rejected before, 8% after).
    const warmish = (i: number) => excess(i) > 1.5 && excess(i) < 3;
    const rejected = (i: number) => legs.labels[i]!;
    expect(mean(10_000, d, rejected, warmish).mean).toBeGreaterThan(0.5);
    expect(mean(d, 14_000, rejected, warmish).mean).toBeLessThan(0.2);
  });

  it('the new carrier appears only at its row, on half of the legs, and the risk moves between carriers', () => {
    const d = at.get('new-carrier')!;
    for (let i = 0; i < d; i++) expect(v(i, CARRIER)).not.toBe(NEW_CARRIER);
    const share = mean(d, LENGTH, (i) => (v(i, CARRIER) === NEW_CARRIER ? 1 : 0)).mean;
    // 4,000 legs at p = 0.5: sd 0.008, so ±0.03 is beyond 3 sd.
    expect(Math.abs(share - 0.5)).toBeLessThan(0.03);
    const brisk = (i: number) => v(i, CARRIER) === NEW_CARRIER;
    const others = (i: number) => !brisk(i);
    const rejected = (i: number) => legs.labels[i]!;
    const openMinutes = (i: number) => v(i, DOOR_MINUTES);
    // Its multi-drop runs open the doors far more often, yet its pre-chilled loads pass (seed 7: 22
    // against 8 minutes open, 6% rejected) ...
    expect(mean(d, LENGTH, openMinutes, brisk).mean).toBeGreaterThan(
      2 * mean(d, LENGTH, openMinutes, others).mean,
    );
    expect(mean(d, LENGTH, rejected, brisk).mean).toBeLessThan(0.15);
    // ... while the other carriers' market pickups are rejected far more than their legs before (9% → 50%).
    expect(mean(d, LENGTH, rejected, others).mean).toBeGreaterThan(mean(d - 2000, d, rejected).mean + 0.25);
  });

  it('labels are known 2–8 hours after their leg reaches the gate, and legs come in time order', () => {
    for (let i = 0; i < LENGTH; i++) {
      const delay = (legs.labelTimes[i]! - legs.times[i]!) / 3_600_000;
      expect(delay).toBeGreaterThanOrEqual(2);
      expect(delay).toBeLessThanOrEqual(8);
      if (i > 0) expect(legs.times[i]!).toBeGreaterThanOrEqual(legs.times[i - 1]!);
    }
    expect(new Set(legs.ids).size).toBe(LENGTH);
    expect(legs.ids[42]).toMatch(/^(NWJ|PDB|GPM)-000042$/);
  });

  it('is seeded: the same seed gives the same legs, another seed others, and a snapshot goes on exactly', () => {
    const again = draw(7, 3000);
    expect(again.rows).toEqual(legs.rows.subarray(0, 3000 * WIDTH));
    expect(Array.from(again.labels)).toEqual(Array.from(legs.labels.subarray(0, 3000)));
    expect(draw(8, 3000).rows).not.toEqual(again.rows);
    const s = new FreightScenario(7, { length: LENGTH });
    const row = new Float64Array(WIDTH);
    for (let i = 0; i < 1000; i++) s.next(row, 0);
    const snap = JSON.parse(JSON.stringify(s.snapshot()));
    const t = new FreightScenario(7, { length: LENGTH });
    t.restore(snap);
    const a = new Float64Array(WIDTH);
    const b = new Float64Array(WIDTH);
    for (let i = 0; i < 500; i++) {
      expect(t.next(b, 0)).toBe(s.next(a, 0));
      expect(b).toEqual(a);
      expect(t.leg).toEqual(s.leg);
    }
  });

  it('refuses a bad length, gap or label window naming the option', () => {
    expect(() => new FreightScenario(1, { length: 10 })).toThrow(/length/);
    expect(() => new FreightScenario(1, { gapSeconds: 0 })).toThrow(/gapSeconds/);
    expect(() => new FreightScenario(1, { labelHours: [5, 2] })).toThrow(/labelHours/);
  });
});
