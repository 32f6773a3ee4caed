import quantile from '@stdlib/stats-base-dists-chisquare-quantile';
import { describe, expect, it } from 'vitest';
import {
  type FeatureSchema,
  nominal,
  numeric,
  Rng,
  ShoalError,
  WELFORD_SLOTS,
  welfordAdd,
  welfordSampleVariance,
} from '../../src/core/index.js';
import {
  type ChiSquareResult,
  chiSquareHomogeneity,
  createInputMonitor,
  type InputMonitor,
  type InputMonitorSnapshot,
  PageHinkley,
  restoreInputMonitor,
} from '../../src/drift/index.js';
import { median } from '../support/drift-streams.js';
import { note } from '../support/note.js';

/**
 * Input drift before any label: a numeric feature (invented: a box temperature of mean 4 °C and
 * standard deviation 1.5 °C) and a nominal one (an invented carrier code, four carriers with shares
 * 0.4, 0.3, 0.2, 0.1 and a fifth code unused at first).
 */
const schema: FeatureSchema = { features: [numeric('box_temp'), nominal('carrier', 5)] };
const T0 = 5000;
const LENGTH = 10_000;

interface Change {
  /** Mean shift of the numeric feature from T0 on, in standard deviations. */
  readonly shift: number;
  /** Share of rows from T0 on that come from the new carrier (code 4). */
  readonly newCarrier: number;
}

function fillRow(rng: Rng, t: number, change: Change, row: Float64Array): void {
  const after = t >= T0;
  row[0] = 4 + 1.5 * (rng.normal() + (after ? change.shift : 0));
  const u = rng.next();
  const old = u < 0.4 ? 0 : u < 0.7 ? 1 : u < 0.9 ? 2 : 3;
  row[1] = after && rng.next() < change.newCarrier ? 4 : old;
}

/** The first row index ≥ T0 at which each feature is flagged (−1 if never), and flags before T0. */
function run(monitor: InputMonitor, seed: number, change: Change) {
  const rng = new Rng(seed);
  const row = new Float64Array(2);
  const first = [-1, -1];
  const early = [0, 0];
  for (let t = 0; t < LENGTH; t++) {
    fillRow(rng, t, change, row);
    const count = monitor.update(row, 0);
    for (let k = 0; k < count; k++) {
      const f = monitor.flagged[k]!;
      if (t < T0) early[f]!++;
      else if (first[f]! < 0) first[f] = t;
    }
  }
  return { first, early };
}

describe('input-drift monitors', () => {
  it('flags a one-standard-deviation mean shift within 500 values in ≥ 95 of 100 streams', () => {
    // Siegmund's approximation (numeric-shift.ts; from memory) puts the mean delay near 40 values
    // for δ = 0.5, λ = 20; the requirement is 500.
    const delays: number[] = [];
    let within = 0;
    for (let seed = 1; seed <= 100; seed++) {
      const { first } = run(createInputMonitor(schema), seed, { shift: 1, newCarrier: 0 });
      if (first[0]! >= 0) delays.push(first[0]! - T0);
      if (first[0]! >= 0 && first[0]! - T0 <= 500) within++;
    }
    note(`numeric 1σ shift: flagged within 500 in ${within}/100, median delay ${median(delays)} values`);
    expect(within).toBeGreaterThanOrEqual(95);
  });

  it('flags a new dominant category within two windows', () => {
    // From T0 half the rows come from a carrier never seen before. The χ² statistic of the first full
    // window after T0 is in the hundreds against a 0.1% critical value of 16.27 for 3 degrees of freedom
    // (@stdlib chi-square quantile), so every stream is flagged by the end of the window that follows.
    let flagged = 0;
    const delays: number[] = [];
    for (let seed = 101; seed <= 200; seed++) {
      const { first } = run(createInputMonitor(schema), seed, { shift: 0, newCarrier: 0.5 });
      if (first[1]! >= 0 && first[1]! - T0 < 1000) flagged++;
      delays.push(first[1]! - T0);
    }
    note(
      `new dominant category: flagged within two windows in ${flagged}/100, median delay ${median(delays)}`,
    );
    expect(flagged).toBeGreaterThanOrEqual(95);
  });

  it('stays quiet on stationary inputs at the stated rate', () => {
    // Numeric: Siegmund's ARL₀ ≈ 3·10⁹ values per side (numeric-shift.ts) makes a false flag in 10,000
    // values practically impossible; budget 2 of 100 streams for the estimated standardisation.
    // Nominal: 19 tumbling-window tests per stream, each at significance 0.001, so at most 1.9% of
    // streams by the union bound; budget 6 of 100 (a Poisson(1.9) count exceeds 6 with probability 0.4%).
    const streams = [0, 0];
    for (let seed = 301; seed <= 400; seed++) {
      const { first, early } = run(createInputMonitor(schema), seed, { shift: 0, newCarrier: 0 });
      for (const f of [0, 1]) if (early[f]! > 0 || first[f]! >= 0) streams[f]!++;
    }
    note(`stationary inputs: numeric flagged on ${streams[0]}/100 streams, nominal on ${streams[1]}/100`);
    expect(streams[0]).toBeLessThanOrEqual(2);
    expect(streams[1]).toBeLessThanOrEqual(6);
  });

  it("computes Pearson's χ² of homogeneity, pooling cells with expected counts below 5", () => {
    const out: ChiSquareResult = { statistic: 0, dof: 0 };
    // Worked by hand from Pearson's definition: rows (10, 20, 30) and (20, 20, 20); column totals 30, 40,
    // 50 over N = 120, so every expected count is 15, 20, 25 and χ² = 2(25/15 + 0 + 25/25) = 16/3.
    chiSquareHomogeneity(Float64Array.of(10, 20, 30), Float64Array.of(20, 20, 20), 3, out);
    expect(out.statistic).toBeCloseTo(16 / 3, 12);
    expect(out.dof).toBe(2);
    // Rows (100, 3, 1) and (100, 2, 0), N = 206: columns 2 and 3 (totals 5 and 1, expected counts below
    // 2.5) are pooled into one cell (4, 2), leaving a 2 × 2 table with expected counts column · row / N.
    chiSquareHomogeneity(Float64Array.of(100, 3, 1), Float64Array.of(100, 2, 0), 3, out);
    const term = (observed: number, column: number, row: number) => {
      const expected = (column * row) / 206;
      return (observed - expected) ** 2 / expected;
    };
    expect(out.dof).toBe(1);
    expect(out.statistic).toBeCloseTo(
      term(100, 200, 104) + term(100, 200, 102) + term(4, 6, 104) + term(2, 6, 102),
      12,
    );
    // The 0.1% critical value for 3 degrees of freedom is 16.27 in printed χ² tables (from memory).
    expect(quantile(0.999, 3)).toBeCloseTo(16.266, 3);
  });

  it('flags a constant feature that changes, skips missing values, and adapts after a flag', () => {
    const monitor = createInputMonitor({ features: [numeric('setpoint')] });
    const row = new Float64Array(1);
    let flags = 0;
    for (let t = 0; t < 2000; t++) {
      row[0] = t % 7 === 0 ? Number.NaN : t < 1000 ? 3 : 3.5;
      flags += monitor.update(row, 0);
    }
    // One flag at the change; afterwards 3.5 is the new normal.
    expect(flags).toBe(1);
  });

  it('flags a run of rows read at once exactly as row by row, in the same order', () => {
    // The features' tests are independent, so reading the rows feature by feature (updateRows) must give
    // the flags of a row-by-row pass: a mean shift, a nominal shift, and a missing share that jumps.
    const wide: FeatureSchema = {
      features: [numeric('box_temp'), nominal('carrier', 5), numeric('door_open_s')],
    };
    const rng = new Rng('input-monitor/rows');
    const rows = 30_000;
    const values = new Float64Array(rows * 3);
    for (let t = 0; t < rows; t++) {
      fillRow(rng, t % LENGTH, { shift: 1, newCarrier: 0.5 }, values.subarray(t * 3, t * 3 + 2));
      const gone = t >= 20_000 && t < 25_000 ? 0.5 : 0.01;
      values[t * 3 + 2] = rng.next() < gone ? Number.NaN : 30 + 10 * rng.next();
    }
    const byRow = createInputMonitor(wide, { numeric: { lambda: 8 } });
    const atOnce = createInputMonitor(wide, { numeric: { lambda: 8 } });
    const want: string[] = [];
    const got: string[] = [];
    for (let from = 0, run = 1; from < rows; from += run, run = 1 + ((run * 7919) % 4000)) {
      const to = Math.min(rows, from + run);
      for (let t = from; t < to; t++) {
        const count = byRow.update(values, t * 3);
        for (let k = 0; k < count; k++) want.push(`${t} ${byRow.flagged[k]} ${byRow.missingFlags[k]}`);
      }
      const count = atOnce.updateRows(values, from * 3, to - from);
      for (let k = 0; k < count; k++)
        got.push(`${from + atOnce.flagRows[k]!} ${atOnce.flagged[k]} ${atOnce.missingFlags[k]}`);
      expect(JSON.stringify(atOnce.snapshot())).toBe(JSON.stringify(byRow.snapshot()));
    }
    // Each feature is flagged: the mean shift (0), the new carrier (1) and the missing share (2, both ways).
    for (const f of [0, 1]) expect(want.some((w) => w.split(' ')[1] === `${f}`)).toBe(true);
    expect(want.filter((w) => w.endsWith(' 2 1')).length).toBeGreaterThanOrEqual(2);
    expect(got).toEqual(want);
  });

  it('flags a numeric feature where Page-Hinkley on Welford-standardised values alarms, bit for bit', () => {
    // The definition the monitor's numeric test writes out in one kernel: z = (x − x̄)/s from Welford's
    // running mean and sample deviation (Welford 1962; core/running-stats.ts) before x joins them, clipped,
    // fed to the two-sided Page-Hinkley test (Page 1954; drift/page-hinkley.ts); missing values skipped,
    // the first `warmup` values only standardising, and everything starting again after an alarm.
    const options = { delta: 0.5, lambda: 6, warmup: 12, clip: 5 };
    const one: FeatureSchema = { features: [numeric('box_temp')] };
    const rng = new Rng('input-monitor/definition');
    const rows = 40_000;
    const values = new Float64Array(rows);
    for (let t = 0; t < rows; t++) {
      const regime = Math.floor(t / 1500) % 3;
      values[t] = rng.next() < 0.03 ? Number.NaN : 4 + regime * 0.8 + 1.5 * rng.normal();
    }
    const want: number[] = [];
    const stats = new Float64Array(WELFORD_SLOTS);
    const test = new PageHinkley({
      delta: options.delta,
      lambda: options.lambda,
      direction: 'both',
      minCount: 1,
    });
    for (let t = 0; t < rows; t++) {
      const x = values[t]!;
      if (Number.isNaN(x)) continue;
      if (stats[0]! < options.warmup) {
        welfordAdd(stats, 0, x, 1);
        continue;
      }
      const sd = Math.sqrt(welfordSampleVariance(stats, 0));
      const d = x - stats[1]!;
      const z = sd > 0 ? d / sd : d === 0 ? 0 : Math.sign(d) * options.clip;
      welfordAdd(stats, 0, x, 1);
      if (test.update(Math.max(-options.clip, Math.min(options.clip, z))) === 'drift') {
        want.push(t);
        stats.fill(0);
      }
    }
    const monitor = createInputMonitor(one, { numeric: options });
    const got: number[] = [];
    for (let from = 0, run = 1; from < rows; from += run, run = 1 + ((run * 7919) % 3000)) {
      const count = monitor.updateRows(values, from, Math.min(run, rows - from));
      for (let k = 0; k < count; k++)
        if (monitor.missingFlags[k] === 0) got.push(from + monitor.flagRows[k]!);
    }
    expect(want.length).toBeGreaterThan(20);
    expect(got).toEqual(want);
  });

  it('reads a value equal to the running mean as z = 0 when the spread is subnormal', () => {
    // IEEE 754 subnormals: readings 1e-160 apart leave M2 = 5e-321, so (n − 1)/M2 overflows to ∞ while
    // s = √(M2/(n − 1)) is still positive; a value at the mean is z = 0 (0/s), not 0·∞ = NaN.
    const one: FeatureSchema = { features: [numeric('strain')] };
    const monitor = createInputMonitor(one, { numeric: { warmup: 2 } });
    const values = Float64Array.from([0, 1e-160, 1e-160 / 2, 1e-160 / 2, 1e-160 / 2]);
    expect(monitor.updateRows(values, 0, values.length)).toBe(0);
    const row = createInputMonitor(one, { numeric: { warmup: 2 } });
    for (let t = 0; t < values.length; t++) expect(row.update(values, t)).toBe(0);
  });

  it('refuses an infinite reading, naming the feature, before it joins the statistics', () => {
    // An infinite value (IEEE 754 ±∞) would make the running mean infinite and every later standardised
    // value NaN: it is refused at its own row, read at once or row by row, and leaves the state as it was.
    const rng = new Rng('input-monitor/infinite');
    const rows = 200;
    const values = new Float64Array(rows * 2);
    for (let t = 0; t < rows; t++)
      fillRow(rng, t, { shift: 0, newCarrier: 0 }, values.subarray(2 * t, 2 * t + 2));
    const clean = createInputMonitor(schema);
    clean.updateRows(values, 0, 120);
    values[2 * 120] = Number.NEGATIVE_INFINITY;
    const byRow = createInputMonitor(schema);
    const atOnce = createInputMonitor(schema);
    const refusal = (read: () => void): string => {
      try {
        read();
      } catch (e) {
        expect(e).toBeInstanceOf(ShoalError);
        return (e as Error).message;
      }
      return 'no error';
    };
    const one = refusal(() => {
      for (let t = 0; t < rows; t++) byRow.update(values, 2 * t);
    });
    const all = refusal(() => atOnce.updateRows(values, 0, rows));
    expect(one).toMatch(/feature "box_temp" got -Infinity at value 0 of those read at once/);
    expect(all).toMatch(/feature "box_temp" got -Infinity at value 120 of those read at once/);
    // Row by row, every test had read rows 0–119 and nothing of row 120 when the refusal came.
    expect(JSON.stringify(byRow.snapshot())).toBe(JSON.stringify(clean.snapshot()));
  });

  it('restores from a JSON snapshot and flags identically on the next 10,000 rows', () => {
    const monitor = createInputMonitor(schema, { nominal: { window: 200 }, numeric: { lambda: 8 } });
    const rng = new Rng(77);
    const rows = new Float64Array(2 * 16_000);
    const change = { shift: 0.7, newCarrier: 0.3 };
    for (let t = 0; t < 16_000; t++) fillRow(rng, t, change, rows.subarray(2 * t, 2 * t + 2));
    for (let t = 0; t < 5200; t++) monitor.update(rows, 2 * t);
    const copy = restoreInputMonitor(JSON.parse(JSON.stringify(monitor.snapshot())) as InputMonitorSnapshot);
    const trace = (m: InputMonitor) => {
      const out: string[] = [];
      for (let t = 5200; t < 15_200; t++) {
        const count = m.update(rows, 2 * t);
        if (count > 0) out.push(`${t}:${Array.from(m.flagged.subarray(0, count)).join('+')}`);
      }
      return out.join(' ');
    };
    const a = trace(monitor);
    expect(a.length).toBeGreaterThan(0);
    expect(trace(copy)).toBe(a);
    expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(monitor.snapshot()));
    monitor.reset();
    expect(JSON.stringify(monitor.snapshot())).toBe(
      JSON.stringify(
        createInputMonitor(schema, { nominal: { window: 200 }, numeric: { lambda: 8 } }).snapshot(),
      ),
    );
  });

  it('refuses bad parameters, rows and snapshots with a ShoalError naming the problem', () => {
    const cases: [() => unknown, string, RegExp][] = [
      [() => createInputMonitor(schema, { nominal: { window: 0 } }), 'invalid-parameter', /nominal\.window/],
      [
        () => createInputMonitor(schema, { nominal: { significance: 1 } }),
        'invalid-parameter',
        /significance/,
      ],
      [() => createInputMonitor(schema, { numeric: { lambda: -1 } }), 'invalid-parameter', /numeric\.lambda/],
      [() => createInputMonitor(schema, { numeric: { delta: -0.5 } }), 'invalid-parameter', /numeric\.delta/],
      [() => createInputMonitor(schema, { numeric: { warmup: 1 } }), 'invalid-parameter', /numeric\.warmup/],
      [() => createInputMonitor({ features: [] }), 'invalid-parameter', /at least one feature/],
      [() => createInputMonitor(schema).update(new Float64Array(3), 2), 'invalid-row', /offset 2/],
      [() => createInputMonitor(schema).updateRows(new Float64Array(5), 0, 3), 'invalid-row', /3 rows/],
      [() => createInputMonitor(schema).update(Float64Array.of(1, 7), 0), 'invalid-row', /carrier.*got 7/],
      [() => createInputMonitor(schema).update(Float64Array.of(1, 1.5), 0), 'invalid-row', /got 1\.5/],
      [
        () => restoreInputMonitor({ ...createInputMonitor(schema).snapshot(), version: 7 }),
        'invalid-snapshot',
        /version 7/,
      ],
      [
        () => restoreInputMonitor({ ...createInputMonitor(schema).snapshot(), state: { features: [] } }),
        'invalid-snapshot',
        /2 feature states/,
      ],
    ];
    for (const [fn, code, pattern] of cases) {
      let thrown: unknown;
      try {
        fn();
      } catch (e) {
        thrown = e;
      }
      expect(thrown).toBeInstanceOf(ShoalError);
      expect((thrown as ShoalError).code).toBe(code);
      expect((thrown as ShoalError).message).toMatch(pattern);
    }
  });
});
