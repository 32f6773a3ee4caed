import { type ConfiguredSnapshot, decodeF64, encodeF64, ShoalError } from '../core/index.js';

/**
 * The one contract every drift detector keeps. A detector is fed one value at a time — a member's
 * 0/1 error, or any real value — and answers with a level. Work per value is constant on average and
 * allocates nothing.
 *
 * After answering `drift` a detector has already adapted as its paper prescribes (ADWIN has dropped the
 * stale part of its window; DDM, EDDM, Page-Hinkley and HDDM_A have restarted their statistics), so the
 * caller only acts on the answer.
 *
 * Levels by kind: `adwin` answers `drift` for a change of the mean in either direction (`shift` tells
 * which) and `warning` while a cut holds at its larger warning δ, from
 * one check to the next; `ddm` and `hddm-a` judge every value; `eddm` judges at each error and its level
 * holds until the next error; `page-hinkley` has no warning level.
 *
 * @example
 * const level = detector.update(prediction === label ? 0 : 1);
 * if (level === 'drift') replaceMember();
 */
export type DriftLevel = 'stable' | 'warning' | 'drift';

/**
 * Which way the monitored mean moved at a drift alarm: `rise` (for a 0/1 error, the member got worse)
 * or `fall` (it got better).
 */
export type DriftShift = 'rise' | 'fall';

export interface DriftDetector {
  /** The detector's kind, as in configuration (`adwin`, `ddm`, …). */
  readonly kind: string;
  /** Feed one value; returns the level after it. */
  update(value: number): DriftLevel;
  /** The detector's current estimate of the monitored quantity (for example the error rate). */
  readonly estimate: number;
  /**
   * Which way the mean moved at the last `drift` answer, decided from the detector's own statistics at
   * the moment of the alarm, before any reset (null before the first alarm). Read it right after
   * `update` answered `drift`; it is not part of the snapshot.
   */
  readonly shift: DriftShift | null;
  /**
   * The detector's estimate of the monitored mean at the last alarm, before any reset: the mean of the
   * recent part of ADWIN's window after its cut, the running mean of the others (NaN before any alarm).
   */
  readonly alarmEstimate: number;
  /** Values seen since the last reset (or, for ADWIN, the current window width). */
  readonly count: number;
  /** Forget everything seen. */
  reset(): void;
  /** Everything needed to rebuild the detector exactly, JSON-safe. */
  snapshot(): DetectorSnapshot;
}

/** A detector's snapshot: the shared envelope with the detector's settings. */
export type DetectorSnapshot = ConfiguredSnapshot;

/** The level codes a snapshot stores for a detector that remembers its last level between values. */
export const LEVEL_CODES: readonly DriftLevel[] = ['stable', 'warning', 'drift'];

/**
 * Check an input that must be a 0/1 error (DDM and EDDM model a Bernoulli sequence). The message is
 * built only on failure.
 */
export function checkErrorValue(kind: string, value: number): void {
  if (value !== 0 && value !== 1) {
    throw new ShoalError('invalid-input', `${kind}: expects a 0/1 error value, got ${value}`);
  }
}

/** Check an input that must lie in [0, 1] (the range the Hoeffding bounds of ADWIN and HDDM_A assume). */
export function checkUnitValue(kind: string, value: number): void {
  if (!(value >= 0 && value <= 1)) {
    throw new ShoalError('invalid-input', `${kind}: expects a value in [0, 1], got ${value}`);
  }
}

/** Check an input that may be any finite real value. */
export function checkFiniteValue(kind: string, value: number): void {
  if (!Number.isFinite(value)) {
    throw new ShoalError('invalid-input', `${kind}: expects a finite value, got ${value}`);
  }
}

/**
 * Scalar detector state as base64 doubles, so that ±Infinity, NaN and every bit survive JSON exactly
 * (a restored detector must behave bit-identically).
 */
export function packScalars(values: readonly number[]): string {
  return encodeF64(Float64Array.from(values));
}

/** The inverse of `packScalars`, refusing a state of the wrong length. */
export function unpackScalars(kind: string, text: unknown, length: number): Float64Array {
  const values = decodeF64(text as string, `${kind} state`);
  if (values.length !== length) {
    throw new ShoalError(
      'invalid-snapshot',
      `${kind} state: expected ${length} numbers, got ${values.length}`,
    );
  }
  return values;
}

/** One field of a snapshot's state object, or an `invalid-snapshot` error naming it. */
export function stateField(kind: string, state: unknown, name: string): unknown {
  if (typeof state !== 'object' || state === null || !(name in state)) {
    throw new ShoalError('invalid-snapshot', `${kind} state: missing field ${name}`);
  }
  return (state as Record<string, unknown>)[name];
}
