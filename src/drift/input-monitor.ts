import {
  type ConfiguredSnapshot,
  checkSchema,
  checkSnapshot,
  type FeatureSchema,
  ShoalError,
} from '../core/index.js';
import { CategoryShift, type CategoryShiftOptions, resolveCategoryShift } from './category-shift.js';

import { MissingShift } from './missing-shift.js';
import { NumericShift, type NumericShiftOptions, resolveNumericShift } from './numeric-shift.js';

/**
 * The contract of an input-drift monitor: it reads every scored row — before any label exists — and
 * flags the features whose distribution has changed. Nothing is allocated per row: `update` returns how
 * many features were flagged on this row, and their indices are in `flagged[0 … count − 1]`, a buffer
 * the monitor owns and overwrites on the next row.
 *
 * @example
 * const monitor = createInputMonitor(schema);
 * const count = monitor.update(frame, i * width);
 * for (let k = 0; k < count; k++) alertFeature(schema.features[monitor.flagged[k]].name);
 */
export interface InputMonitor {
  readonly schema: FeatureSchema;
  /** Indices of the features flagged by the last `update`, in feature order; valid up to its count. */
  readonly flagged: Int32Array;
  /** For each flag: 1 when the feature's missing share jumped, 0 when its values' distribution moved. */
  readonly missingFlags: Uint8Array;
  /** Feed one row read in place at row[offset …]; returns the number of features flagged. */
  update(row: Float64Array, offset: number): number;
  /** Forget everything seen. */
  reset(): void;
  snapshot(): InputMonitorSnapshot;
}

/** An input monitor's snapshot: the shared envelope, with the schema and settings it was built with. */
export interface InputMonitorSnapshot extends ConfiguredSnapshot {
  readonly schema: FeatureSchema;
}

export type InputMonitorOptions = {
  /** The test on each numeric feature (see numeric-shift.ts). */
  readonly numeric: NumericShiftOptions;
  /** The test on each nominal feature (see category-shift.ts). */
  readonly nominal: CategoryShiftOptions;
};

export type InputMonitorSpec = {
  readonly numeric?: Partial<NumericShiftOptions>;
  readonly nominal?: Partial<CategoryShiftOptions>;
};

/** What the monitor needs from the test watching one feature. */
interface FeatureWatch {
  update(value: number): boolean;
  reset(): void;
  state(): unknown;
  load(state: unknown): void;
}

const KIND = 'input-monitor';
/**
 * The missing-share watch of every feature: rows in its recent window, and δ, its false-alarm
 * probability per test (small, because it is tested on every row of every feature; our choice).
 */
const MISSING_WINDOW = 500;
const MISSING_DELTA = 1e-9;
const VERSION = 1;

/**
 * One test per feature of the schema: Page-Hinkley on standardised values for a numeric feature,
 * a windowed χ² test of category frequencies for a nominal one.
 */
class FeatureDriftMonitor implements InputMonitor {
  readonly schema: FeatureSchema;
  readonly options: InputMonitorOptions;
  readonly flagged: Int32Array;
  readonly missingFlags: Uint8Array;
  private readonly watches: readonly FeatureWatch[];
  private readonly missing: readonly MissingShift[];
  private readonly width: number;

  constructor(schema: FeatureSchema, spec: InputMonitorSpec) {
    this.schema = checkSchema(KIND, schema);
    this.options = {
      numeric: resolveNumericShift(KIND, spec.numeric ?? {}),
      nominal: resolveCategoryShift(KIND, spec.nominal ?? {}),
    };
    this.width = schema.features.length;
    this.flagged = new Int32Array(this.width);
    this.missingFlags = new Uint8Array(this.width);
    this.missing = schema.features.map(() => new MissingShift(MISSING_WINDOW, MISSING_DELTA));
    this.watches = schema.features.map((f) =>
      f.kind === 'nominal'
        ? new CategoryShift(`${KIND}: feature ${f.name}`, f.values, this.options.nominal)
        : new NumericShift(this.options.numeric),
    );
  }

  update(row: Float64Array, offset: number): number {
    if (!(offset >= 0 && Number.isInteger(offset) && offset + this.width <= row.length)) {
      throw new ShoalError(
        'invalid-row',
        `${KIND}: a row needs ${this.width} values at offset ${offset}, but the buffer holds ${row.length}`,
      );
    }
    const watches = this.watches;
    let count = 0;
    const missing = this.missing;
    for (let i = 0; i < this.width; i++) {
      const x = row[offset + i]!;
      const moved = watches[i]!.update(x);
      const gone = missing[i]!.update(Number.isNaN(x));
      if (moved || gone) {
        this.missingFlags[count] = gone ? 1 : 0;
        this.flagged[count++] = i;
      }
    }
    return count;
  }

  reset(): void {
    for (const w of this.watches) w.reset();
    for (const m of this.missing) m.reset();
  }

  snapshot(): InputMonitorSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      schema: this.schema,
      options: { ...this.options },
      state: { features: this.watches.map((w) => w.state()), missing: this.missing.map((m) => m.state()) },
    };
  }

  load(state: unknown): void {
    const features = (state as { features?: unknown })?.features;
    if (!Array.isArray(features) || features.length !== this.width) {
      throw new ShoalError('invalid-snapshot', `${KIND} state: expected ${this.width} feature states`);
    }
    this.watches.forEach((w, i) => {
      w.load(features[i]);
    });
    const missing = (state as { missing?: unknown }).missing;
    if (Array.isArray(missing) && missing.length === this.width)
      this.missing.forEach((m, i) => {
        m.load(missing[i]);
      });
  }
}

/**
 * Build an input-drift monitor over a schema; options are validated (a bad one throws a `ShoalError`
 * with code `invalid-parameter` naming it, e.g. `nominal.window`).
 *
 * @example
 * const monitor = createInputMonitor(schema, { numeric: { lambda: 30 }, nominal: { window: 1000 } });
 */
export function createInputMonitor(schema: FeatureSchema, spec: InputMonitorSpec = {}): InputMonitor {
  return new FeatureDriftMonitor(schema, spec);
}

/** Rebuild a monitor from a snapshot; it then flags exactly what the original would have flagged. */
export function restoreInputMonitor(snapshot: InputMonitorSnapshot): InputMonitor {
  checkSnapshot(snapshot, KIND, VERSION);
  const monitor = new FeatureDriftMonitor(snapshot.schema, snapshot.options as InputMonitorSpec);
  monitor.load(snapshot.state);
  return monitor;
}
