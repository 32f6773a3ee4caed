import { makeVector, Table, tableToIPC, Utf8, vectorFromArray } from 'apache-arrow';
import type { Rng } from '../../src/core/index.js';
import { sea } from '../../src/streams/index.js';

/**
 * Seeded SEA events (Street & Kim, KDD 2001: f1, f2, f3 uniform on [0, 10]; class 1 iff f1 + f2 ≤ θ)
 * with an id per event (`e<n>`), as Arrow tables; `label` may be left out for late-label runs.
 */
export interface Events {
  readonly ids: string[];
  readonly f1: Float64Array;
  readonly f2: Float64Array;
  readonly f3: Float64Array;
  readonly labels: string[];
}

export function seaEvents(rows: number, seed: number): Events {
  const g = sea({}, seed);
  const row = new Float64Array(3);
  const e: Events = {
    ids: [],
    f1: new Float64Array(rows),
    f2: new Float64Array(rows),
    f3: new Float64Array(rows),
    labels: [],
  };
  for (let i = 0; i < rows; i++) {
    const label = g.next(row, 0);
    e.ids.push(`e${i}`);
    e.f1[i] = row[0]!;
    e.f2[i] = row[1]!;
    e.f3[i] = row[2]!;
    e.labels.push(g.classes[label]!);
  }
  return e;
}

/** Rows [from, to) as an Arrow table (with the label column when `labelled`). */
export function eventTable(e: Events, from: number, to: number, labelled: boolean): Table {
  return new Table({
    id: vectorFromArray(e.ids.slice(from, to), new Utf8()),
    f1: makeVector(e.f1.slice(from, to)),
    f2: makeVector(e.f2.slice(from, to)),
    f3: makeVector(e.f3.slice(from, to)),
    ...(labelled ? { label: vectorFromArray(e.labels.slice(from, to), new Utf8()) } : {}),
  });
}

/** Rows [from, to) as one Arrow IPC stream (the value of one events message). */
export function arrowMessage(e: Events, from: number, to: number, labelled = true): Buffer {
  return Buffer.from(tableToIPC(eventTable(e, from, to, labelled), 'stream'));
}

/** A labels message: NDJSON lines of id and label, on `partition` when one is named. */
export interface LabelMessage {
  readonly value: string;
  readonly headers: Record<string, string>;
  readonly partition?: number;
}

/**
 * The labels of events [from, from + round) as NDJSON messages of at most `perMessage` lines, in a seeded
 * Fisher–Yates shuffle: produced once the round's events were scored, each label comes after its event
 * and at most `round` events late. With `partitionOf` (event index → partition) each label goes to its
 * event's partition number, in the shuffled order within each partition.
 */
export function shuffledLabels(
  events: Events,
  from: number,
  round: number,
  rng: Rng,
  perMessage: number,
  partitionOf?: (event: number) => number,
): LabelMessage[] {
  const order = Array.from({ length: round }, (_, i) => from + i);
  for (let i = order.length - 1; i > 0; i--) {
    const j = Math.floor(rng.next() * (i + 1));
    [order[i], order[j]] = [order[j]!, order[i]!];
  }
  const groups = new Map<number | undefined, number[]>();
  for (const k of order) {
    const p = partitionOf?.(k);
    const group = groups.get(p);
    if (group === undefined) groups.set(p, [k]);
    else group.push(k);
  }
  const out: LabelMessage[] = [];
  for (const [partition, ks] of [...groups].sort(([a], [b]) => (a ?? 0) - (b ?? 0))) {
    for (let i = 0; i < ks.length; i += perMessage) {
      const lines = ks
        .slice(i, i + perMessage)
        .map((k) => JSON.stringify({ id: events.ids[k], label: events.labels[k] }));
      out.push({
        value: lines.join('\n'),
        headers: { 'content-type': 'application/x-ndjson' },
        ...(partition === undefined ? {} : { partition }),
      });
    }
  }
  return out;
}
