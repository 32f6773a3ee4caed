import { ShoalError } from './errors.js';

/**
 * The one envelope every snapshot in Shoal has — learners, detectors, input monitors, evaluators,
 * ensembles, stream generators, and the run checkpoint that holds them: the kind of component that
 * wrote it, the format version of its state, and the state itself, JSON-safe and exact. A component
 * built from settings adds them beside the state (`options`, and a `schema` when it reads rows), so a
 * restore can rebuild it before loading the state.
 *
 * @example
 * const saved: Snapshot = learner.snapshot();
 * checkSnapshot(saved, 'naive-bayes', 1); // throws `invalid-snapshot` naming what is wrong
 */
export interface Snapshot<State = unknown> {
  readonly kind: string;
  /** Format version of `state`, bumped when its layout changes. */
  readonly version: number;
  readonly state: State;
}

/** A snapshot of a component built from settings: the settings travel beside the state. */
export interface ConfiguredSnapshot<State = unknown> extends Snapshot<State> {
  readonly options: Readonly<Record<string, unknown>>;
}

/**
 * Check, before anything is restored, that `snapshot` is an envelope of the expected kind and format
 * version with a state, and that its settings (when it carries any) are an object. Every refusal is an
 * `invalid-snapshot` error that says what was expected and what arrived.
 */
export function checkSnapshot(
  snapshot: unknown,
  kind: string,
  version: number,
): asserts snapshot is Snapshot {
  if (typeof snapshot !== 'object' || snapshot === null || Array.isArray(snapshot)) {
    throw new ShoalError('invalid-snapshot', `expected a ${kind} snapshot, got ${describe(snapshot)}`);
  }
  const s = snapshot as Partial<ConfiguredSnapshot>;
  if (s.kind !== kind) {
    throw new ShoalError('invalid-snapshot', `expected a ${kind} snapshot, got ${String(s.kind)}`);
  }
  if (s.version !== version) {
    throw new ShoalError(
      'invalid-snapshot',
      `${kind} snapshot has format version ${String(s.version)}; this build reads version ${version}`,
    );
  }
  if (s.state === undefined || s.state === null) {
    throw new ShoalError('invalid-snapshot', `${kind} snapshot has no state`);
  }
  if ('options' in s && (typeof s.options !== 'object' || s.options === null)) {
    throw new ShoalError(
      'invalid-snapshot',
      `${kind} snapshot options: expected an object, got ${String(s.options)}`,
    );
  }
}

function describe(value: unknown): string {
  return value === null ? 'null' : Array.isArray(value) ? 'an array' : typeof value;
}
