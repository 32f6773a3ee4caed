import { describe, expect, it } from 'vitest';
import type { Frame } from '../../src/frames/index.js';
import type { WindowRecord } from '../../src/journal/index.js';
import { friedman1 } from '../support/regressor-streams.js';
import { labelsFrame, session } from './session-support.js';

describe('a regression session (task: regression)', () => {
  it('judges each late label against the number served for its row: MAE and RMSE by their definitions', () => {
    // Friedman #1 (Friedman, Ann. Statist. 1991); MAE = mean |y − ŷ|, RMSE = √(mean (y − ŷ)²), R² =
    // 1 − Σ(y − ŷ)² / Σ(y − ȳ)² (Draper & Smith 1998, from memory), with ŷ the number served when the
    // row was scored, computed here from the scores the session handed out.
    const rows = 4000;
    const batch = 500;
    const data = friedman1(rows, 5);
    const { session: s, journal } = session({ task: 'regression', ensemble: { members: 4 } });
    const served = new Float64Array(rows);
    const frame = (first: number): Frame => ({
      schema: data.schema,
      rows: batch,
      width: data.width,
      values: data.rows.subarray(first * data.width, (first + batch) * data.width),
      labels: null,
      ids: Array.from({ length: batch }, (_, i) => `e${first + i}`),
      origin: { source: 'test', unit: 'row', batch: -1, positions: new Int32Array(batch) },
    });
    const deliver = (first: number): void => {
      // One batch's labels, two batches late, in reverse order.
      const ids = Array.from({ length: batch }, (_, i) => `e${first + batch - 1 - i}`);
      const labels = ids.map((id) => data.targets[Number(id.slice(1))]!);
      expect(s.learn(labelsFrame(ids, labels), [])).toBe(0);
    };
    for (let first = 0; first < rows; first += batch) {
      const scores = s.score(frame(first), []);
      served.set(scores.values.subarray(0, batch), first);
      expect(scores.classes).toEqual([]);
      if (first >= 2 * batch) deliver(first - 2 * batch);
    }
    deliver(rows - 2 * batch);
    deliver(rows - batch);
    const summary = s.finish([]);
    let abs = 0;
    let sq = 0;
    let mean = 0;
    for (let i = 0; i < rows; i++) mean += data.targets[i]! / rows;
    let spread = 0;
    for (let i = 0; i < rows; i++) {
      const e = data.targets[i]! - served[i]!;
      abs += Math.abs(e);
      sq += e * e;
      spread += (data.targets[i]! - mean) ** 2;
    }
    expect(summary.labels).toMatchObject({ joined: rows, pending: 0, inline: 0 });
    expect(summary).toMatchObject({ task: 'regression', rows, trained: rows, accuracy: null, classes: [] });
    expect(summary.mae!).toBeCloseTo(abs / rows, 9);
    expect(summary.rmse!).toBeCloseTo(Math.sqrt(sq / rows), 9);
    expect(summary.r2!).toBeCloseTo(1 - sq / spread, 9);
    // The first batches were served by a model that had learnt nothing yet: 0 everywhere.
    expect(served[0]).toBe(0);
    const windows = journal.records.filter((r): r is WindowRecord => r.type === 'window');
    expect(windows.length).toBe(rows / 1000);
    expect(
      windows.every((w) => w.seats.length === 0 && w.window.rmse !== null && w.window.kappa === null),
    ).toBe(true);
    expect(s.metrics.windowAccuracy).toBeNull();
    expect(s.seats()).toEqual([]);
  });
});
