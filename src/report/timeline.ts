import type { ChangePoints } from '../core/index.js';
import {
  type InputDriftRecord,
  isDriftSignal,
  type JournalRecord,
  type LifecycleRecord,
  type MemberState,
  type RunRecord,
  type WindowRecord,
} from '../journal/index.js';

/**
 * The report's axis, chosen explicitly: rows trained on. Records carry both rows scored and rows
 * trained; with late labels the two differ by the label delay, and every figure the report draws
 * (evaluation windows, member changes) happens when a label is learnt.
 */
export const AXIS = 'trained' as const;

/** A journal record placed on the report's axis at `row`. */
export type Placed<T> = T & { readonly row: number };

function place<T extends { readonly trained: number }>(record: T): Placed<T> {
  return { ...record, row: record[AXIS] };
}

/** A stretch of rows during which one member held a seat in one state. */
export interface LaneSegment {
  readonly start: number;
  readonly end: number;
  readonly state: MemberState;
  readonly member: number;
  /** The kind of learner the member is. */
  readonly learner: string;
  /** Why the member entered the state (the lifecycle record's reason). */
  readonly reason: string;
}

/** A member retired and the one that took its seat. */
export interface Replacement {
  readonly row: number;
  readonly seat: number;
  readonly retired: number;
  /** The member that took the seat; null when the journal does not say. */
  readonly successor: number | null;
  /** How the successor came (understudy promoted, fresh member). */
  readonly how: string;
  /** The monitor's error estimate for the retired member. */
  readonly estimate: number;
}

/** Everything a report draws along the rows axis. */
export interface Timeline {
  /** Rows covered: the largest row any record mentions, or the summary's count (at least 1). */
  readonly rows: number;
  readonly seats: number;
  /** Per seat, its segments in row order. */
  readonly lanes: readonly (readonly LaneSegment[])[];
  readonly windows: readonly Placed<WindowRecord>[];
  /** Lifecycle records whose cause is a drift signal of a member monitor. */
  readonly driftSignals: readonly Placed<LifecycleRecord>[];
  /** Lifecycle records of a warning that put a member under watch (an understudy started). */
  readonly warnings: readonly Placed<LifecycleRecord>[];
  readonly replacements: readonly Replacement[];
  readonly inputDrifts: readonly Placed<InputDriftRecord>[];
  /** The stream's true change points, when the run record carries them; null when it does not. */
  readonly changes: readonly TrueChange[] | null;
}

/**
 * A true change point of the stream (recorded by `shoal spawn`, journaled by the replay) and how the
 * ensemble answered it: its first member drift signal and its first replacement at or after the change
 * and before the next one (null: none). Delays are on the report's axis, rows trained: with labels
 * inline, the rows after the change.
 */
export interface TrueChange {
  readonly row: number;
  readonly from: string;
  readonly to: string;
  readonly firstSignal: number | null;
  readonly firstReplacement: number | null;
}

/**
 * Lay the records of a journal out along the rows axis. A seat's state holds from its lifecycle
 * record until the seat's next one (or the end of the run); a member retired and its successor
 * appear at the same row, so retirements make no segment of their own but a `Replacement`.
 */
export function timeline(records: readonly JournalRecord[]): Timeline {
  const lifecycle: Placed<LifecycleRecord>[] = [];
  const windows: Placed<WindowRecord>[] = [];
  const inputDrifts: Placed<InputDriftRecord>[] = [];
  let rows = 1;
  let seats = 0;
  let run: RunRecord | null = null;
  for (const r of records) {
    if (r.type === 'run') run ??= r;
    if (r.type === 'lifecycle') {
      lifecycle.push(place(r));
      seats = Math.max(seats, r.seat + 1);
    } else if (r.type === 'window') {
      windows.push(place(r));
      seats = Math.max(seats, r.seats.length);
    } else if (r.type === 'input-drift') inputDrifts.push(place(r));
    if (r.type !== 'run') rows = Math.max(rows, r[AXIS]);
  }
  // A stable sort: records of one row keep the order they were written in.
  lifecycle.sort((a, b) => a.row - b.row);
  windows.sort((a, b) => a.row - b.row);
  const bySeat: Placed<LifecycleRecord>[][] = Array.from({ length: seats }, () => []);
  for (const r of lifecycle) bySeat[r.seat]!.push(r);
  const driftSignals = lifecycle.filter((r) => isDriftSignal(r.cause));
  const replaced = bySeat.flatMap(replacements).sort((a, b) => a.row - b.row || a.seat - b.seat);
  return {
    rows,
    seats,
    lanes: bySeat.map((list) => segments(list, rows)),
    windows,
    driftSignals,
    warnings: lifecycle.filter((r) => r.cause === 'watched'),
    replacements: replaced,
    inputDrifts: [...inputDrifts].sort((a, b) => a.row - b.row),
    changes: run?.changes === undefined ? null : trueChanges(run.changes, driftSignals, replaced),
  };
}

function trueChanges(
  changes: ChangePoints,
  signals: readonly { readonly row: number }[],
  replaced: readonly { readonly row: number }[],
): TrueChange[] {
  const { rows, concepts } = changes;
  return rows.map((row, i) => {
    const next = rows[i + 1] ?? Number.POSITIVE_INFINITY;
    const first = (list: readonly { readonly row: number }[]) =>
      list.find((e) => e.row >= row && e.row < next)?.row ?? null;
    return {
      row,
      from: concepts[i]!,
      to: concepts[i + 1]!,
      firstSignal: first(signals),
      firstReplacement: first(replaced),
    };
  });
}

function segments(list: readonly Placed<LifecycleRecord>[], end: number): LaneSegment[] {
  const out: LaneSegment[] = [];
  list.forEach((r, i) => {
    const next = list[i + 1]?.row ?? end;
    if (next > r.row)
      out.push({
        start: r.row,
        end: next,
        state: r.to,
        member: r.member,
        learner: r.learner,
        reason: r.reason,
      });
  });
  return out;
}

function replacements(list: readonly Placed<LifecycleRecord>[]): Replacement[] {
  const out: Replacement[] = [];
  list.forEach((r, i) => {
    if (r.to !== 'retired') return;
    const next = list[i + 1];
    const taken = next !== undefined && next.from === null && next.row === r.row;
    out.push({
      row: r.row,
      seat: r.seat,
      retired: r.member,
      successor: taken ? next.member : null,
      how: taken ? next.reason : '',
      estimate: r.estimate,
    });
  });
  return out;
}
