import { describe, expect, it } from 'vitest';
import { STACKING_DEFAULTS, Stacking, Verdict } from '../../src/ensembles/index.js';
import type { JournalRecord, LifecycleRecord } from '../../src/journal/index.js';
import { renderReport } from '../../src/report/index.js';
import { LANE_UNIT, laneBlocks } from '../../src/report/seat-lanes.js';
import { timeFrame } from '../../src/report/time-axis.js';
import { type LaneSegment, timeline } from '../../src/report/timeline.js';
import { buildStream } from '../../src/streams/index.js';
import { openTags } from './html.js';

const segment = (start: number, end: number, state: LaneSegment['state'], member: number): LaneSegment => ({
  start,
  end,
  state,
  member,
  learner: 'naive-bayes',
  reason: 'r',
});

describe('seat lanes', () => {
  it("a seat's state holds until its next record; a retirement and its successor share a row", () => {
    const at = (row: number, member: number, from: LifecycleRecord['from'], to: LifecycleRecord['to']) =>
      ({
        type: 'lifecycle',
        scored: row,
        trained: row,
        seat: 0,
        member,
        learner: 'hoeffding-tree',
        from,
        to,
        cause: 'created',
        detector: 'adwin',
        estimate: 0.1,
        reason: to,
      }) as const;
    const t = timeline([
      at(0, 0, null, 'warming'),
      at(100, 0, 'warming', 'active'),
      at(400, 0, 'active', 'watched'),
      at(700, 0, 'watched', 'retired'),
      at(700, 1, null, 'active'),
      {
        type: 'input-drift',
        scored: 1000,
        trained: 1000,
        feature: 'f',
        kind: 'numeric',
        cause: 'distribution',
      },
    ]);
    expect(t.rows).toBe(1000);
    expect(t.lanes[0]!.map((s) => [s.start, s.end, s.state, s.member])).toEqual([
      [0, 100, 'warming', 0],
      [100, 400, 'active', 0],
      [400, 700, 'watched', 0],
      [700, 1000, 'active', 1],
    ]);
    expect(t.replacements).toEqual([
      { row: 700, seat: 0, retired: 0, successor: 1, how: 'active', estimate: 0.1 },
    ]);
  });

  it('a ten-row watch in a million rows keeps a column; a lane never draws more blocks than columns', () => {
    const frame = timeFrame(1_000_000);
    const columns = Math.ceil((frame.right - frame.left) / LANE_UNIT);
    const blocks = laneBlocks(
      [
        segment(0, 500_000, 'active', 0),
        segment(500_000, 500_010, 'watched', 0),
        segment(500_010, 1_000_000, 'active', 0),
      ],
      frame,
    );
    expect(blocks.map((b) => b.state)).toEqual(['active', 'watched', 'active']);
    expect(blocks[1]!.to - blocks[1]!.from).toBe(1);
    expect(blocks[0]!.from).toBe(0);
    expect(blocks[2]!.to).toBe(columns);
    const churn = Array.from({ length: 20_000 }, (_, i) =>
      segment(50 * i, 50 * (i + 1), i % 2 === 0 ? 'warming' : 'active', Math.floor(i / 2)),
    );
    const dense = laneBlocks(churn, frame);
    expect(dense.length).toBeLessThanOrEqual(columns);
    // Columns tile the lane: each block starts where the last one ended.
    expect(dense.map((b) => b.from)).toEqual([0, ...dense.slice(0, -1).map((b) => b.to)]);
  });

  it('labels each lane with the learner in its seat: stacking’s heterogeneous members, one per seat', () => {
    const stream = buildStream({ generator: 'stagger', concepts: 'a', seed: 1 });
    const records: JournalRecord[] = [];
    const ensemble = new Stacking(stream.schema, {}, 1, (c) => records.push({ ...c, scored: c.trained }));
    ensemble.ensureClasses(stream.classes.length);
    const row = new Float64Array(stream.schema.features.length);
    const verdict = new Verdict();
    for (let i = 0; i < 300; i++) ensemble.scoreTrain(row, 0, stream.next(row, 0), verdict);
    const html = renderReport(records);
    const lanes = openTags(html, 'g', 'lane');
    expect(lanes).toHaveLength(STACKING_DEFAULTS.learners.length);
    const kinds = STACKING_DEFAULTS.learners.map((l) => l.kind);
    expect(new Set(kinds).size).toBe(kinds.length);
    kinds.forEach((kind, seat) => {
      const lane = html.slice(html.indexOf(`data-seat="${seat}"`));
      expect(lane).toMatch(new RegExp(`^[^>]*><text[^>]*>${seat} ${kind}</text>`));
      expect(lane).toMatch(new RegExp(`<title>member \\d+ \\(${kind}\\) `));
    });
  });

  it('every drift signal is visible: signals sharing a pixel column carry their count', () => {
    const signal = (row: number, seat: number): JournalRecord => ({
      type: 'lifecycle',
      scored: row,
      trained: row,
      seat,
      member: seat,
      learner: 'hoeffding-tree',
      from: 'active',
      to: 'active',
      cause: 'drift-ignored-improving',
      detector: 'adwin',
      estimate: 0.1,
      reason: 'r',
    });
    // 900,000 rows over a few hundred pixels: rows 500,000 … 500,002 share a column, 900,000 is alone.
    const html = renderReport([
      signal(500_000, 0),
      signal(500_001, 1),
      signal(500_002, 2),
      signal(900_000, 0),
    ]);
    const marks = html.split('<g class="mark drift"').slice(1);
    expect(marks).toHaveLength(2);
    expect(marks[0]).toContain('data-rows="500000 500001 500002"');
    const counts = [...html.matchAll(/<g class="mark-cluster" data-count="(\d+)">.*?<\/g>/g)];
    expect(counts.map((m) => m[1])).toEqual(['3']);
    expect(counts[0]![0]).toMatch(/<text[^>]*class="mark-count"[^>]*>3<\/text>/);
  });

  it('crowded marks: neighbouring columns share one count, labels never overlap, and the counts add up', () => {
    const signal = (row: number): JournalRecord => ({
      type: 'lifecycle',
      scored: row,
      trained: row,
      seat: row % 10,
      member: row % 10,
      learner: 'hoeffding-tree',
      from: 'active',
      to: 'active',
      cause: 'drift-ignored-improving',
      detector: 'adwin',
      estimate: 0.1,
      reason: 'r',
    });
    // 100,000 rows over about 900 pixels: two signals every 200 rows make a run of adjacent columns,
    // whose counts would print over each other; a lone signal far away keeps no count.
    const rows = [
      ...Array.from({ length: 40 }, (_, i) => 40_000 + 200 * i),
      ...Array.from({ length: 40 }, (_, i) => 40_001 + 200 * i),
      99_000,
    ];
    const html = renderReport(rows.map(signal));
    const driftRow = html.slice(html.indexOf('drift signals</text>'), html.indexOf('replacements</text>'));
    const labels = [
      ...driftRow.matchAll(
        /<g class="mark-cluster" data-count="(\d+)">.*?<text x="([\d.]+)"[^>]*>([\d,]+)<\/text>/g,
      ),
    ];
    expect(labels.reduce((n, m) => n + Number(m[1]), 0)).toBe(80);
    for (let i = 1; i < labels.length; i++) {
      const previousEnd = Number(labels[i - 1]![2]) + 5.6 * labels[i - 1]![3]!.length;
      expect(Number(labels[i]![2])).toBeGreaterThan(previousEnd);
    }
  });
});
