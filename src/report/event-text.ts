import type { InputDriftRecord, LifecycleRecord } from '../journal/index.js';
import { fixed, grouped } from './format.js';
import type { Placed, Replacement, TrueChange } from './timeline.js';

/** Hover lines for the events on the rows axis: what happened, where and at which row. */

export function driftSignalText(r: Placed<LifecycleRecord>): string {
  return `row ${grouped(r.row)}: seat ${r.seat}, member ${r.member}: ${r.reason} (error ${fixed(r.estimate, 3)})`;
}

/** `row 3,050: seat 2, member 0 (error 0.412) → member 10, understudy promoted`; the seat left out in its own lane. */
export function replacementText(r: Replacement, seat = true): string {
  return (
    `row ${grouped(r.row)}: ${seat ? `seat ${r.seat}, ` : ''}member ${r.retired} (error ${fixed(r.estimate, 3)})` +
    (r.successor === null ? ' retired' : ` → member ${r.successor}, ${r.how}`)
  );
}

export function inputDriftText(r: Placed<InputDriftRecord>): string {
  return `row ${grouped(r.row)}: ${r.feature} (${r.kind})`;
}

/** `+1,234 rows` after a change, or `none before the next change`. */
export function delayText(change: TrueChange, at: number | null): string {
  return at === null ? 'none before the next change' : `+${grouped(at - change.row)} rows`;
}

/** `row 25,000: 8 → 9; first drift signal +512 rows, first replacement +2,310 rows`. */
export function changeText(c: TrueChange): string {
  return (
    `row ${grouped(c.row)}: the stream changed, ${c.from} → ${c.to}; ` +
    `first drift signal ${delayText(c, c.firstSignal)}, first replacement ${delayText(c, c.firstReplacement)}`
  );
}
