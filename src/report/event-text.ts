import type { InputDriftRecord, LifecycleRecord } from '../journal/index.js';
import { fixed, grouped } from './format.js';
import type { Placed, Replacement } from './timeline.js';

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
