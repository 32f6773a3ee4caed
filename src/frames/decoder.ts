import {
  type ConfigIssue,
  checkSnapshot,
  type Feature,
  type FeatureSchema,
  ShoalError,
  type Snapshot,
} from '../core/index.js';
import { CellReader, numericProblem, showCell } from './cells.js';
import { type Binding, type BindProblem, bindColumns, type SourceColumn } from './columns.js';
import type { Frame, PositionUnit } from './frame.js';
import { FrameBuffer } from './frame-buffer.js';
import { LabelDictionary, type LabelMode } from './label-dictionary.js';
import {
  checkFeatureSpecs,
  type FrameOptions,
  type LabelsAs,
  type ResolvedOptions,
  resolveFrameOptions,
} from './options.js';
import { Vocabulary } from './vocabulary.js';

/** What a source says about itself (an Arrow file's schema metadata written by Shoal's Arrow writer). */
export interface DeclaredSchema {
  /** Feature specifications, as `FrameOptions.features`. */
  readonly features?: unknown;
  /** Class names in code order. */
  readonly classes?: unknown;
}

/** A decoder's state, JSON-safe, for checkpoints: codes must mean the same after a restart. */
export interface FrameDecoderState {
  readonly options: FrameOptions;
  readonly features: readonly Feature[] | null;
  /** Category names given so far, per feature (null for numeric features). */
  readonly categories: readonly (readonly string[] | null)[];
  readonly labelMode: LabelMode | null;
  readonly classes: readonly string[];
}

/** A decoder's snapshot: its state in the shared envelope. */
export type FrameDecoderSnapshot = Snapshot<FrameDecoderState>;

const LABEL_MODES: Readonly<Record<LabelsAs, LabelMode>> = {
  'class-codes': 'code',
  'class-names': 'name',
  regression: 'value',
};

const KIND = 'frame-decoder';
const STATE_VERSION = 1;

/**
 * The stream-level half of decoding: one `FrameDecoder` per stream holds what must stay the same from
 * batch to batch — the feature schema (one object for every frame), the bounded vocabulary of each
 * nominal column, the label dictionary — and the buffers frames are made in. The readers (Arrow,
 * CSV, NDJSON, single messages) are the per-format half and all decode through it.
 *
 * A row a reader refuses may already have added a category or a class it named before the problem was
 * found; codes are never taken back, so this never changes the meaning of an existing code.
 *
 * @example
 * const decoder = new FrameDecoder({ label: 'rejected', id: 'leg_id' });
 * const result = decodeArrowMessage(decoder, message.value, 'legs/0@1204');
 * if (result.ok) ensemble.score(result.frame);
 * decoder.classes; // ['false', 'true']
 */
export class FrameDecoder {
  readonly options: ResolvedOptions;
  readonly buffer = new FrameBuffer();
  /** Reads cells with this stream's missing-value tokens. */
  readonly cells: CellReader;
  private given: FrameOptions;
  private labels: LabelDictionary;
  private current: FeatureSchema | null = null;
  private vocabularies: (Vocabulary | null)[] = [];
  private last: Binding | null = null;

  constructor(options: FrameOptions = {}, where = 'frame options') {
    this.options = resolveFrameOptions(options, where);
    this.given = options;
    this.cells = new CellReader(this.options.missing);
    this.labels = new LabelDictionary(
      this.options.classes,
      this.options.maxClasses,
      (v) => this.cells.isMissing(v),
      this.options.labelsAs === null ? null : LABEL_MODES[this.options.labelsAs],
    );
    if (this.options.features !== null) this.settle(this.options.features);
  }

  /** The feature schema: known from the start when features are given, else after the first batch. */
  get schema(): FeatureSchema | null {
    return this.current;
  }

  /** Class names, index = label code; grows as classes appear. */
  get classes(): readonly string[] {
    return this.labels.classes();
  }

  /** Whether labels are class codes or class names (null until the first label column is seen). */
  get labelMode(): LabelMode | null {
    return this.labels.mode;
  }

  /** The columns bound last (by any reader), or null before the first batch. */
  get binding(): Binding | null {
    return this.last;
  }

  /** Names of the category codes given so far to a nominal feature (by index or name). */
  categories(feature: number | string): readonly string[] {
    const j =
      typeof feature === 'number'
        ? feature
        : (this.current?.features.findIndex((f) => f.name === feature) ?? -1);
    const vocabulary = this.vocabularies[j];
    if (vocabulary === undefined || vocabulary === null) {
      throw new ShoalError('invalid-parameter', `categories: ${String(feature)} is not a nominal feature`);
    }
    return vocabulary.names();
  }

  /**
   * Nominal features whose vocabulary is full, with how many values have shared its overflow code
   * since the start (values beyond the first `values − 1` categories).
   */
  overflows(): { readonly feature: string; readonly codes: number; readonly values: number }[] {
    const found = [];
    for (let j = 0; j < this.vocabularies.length; j++) {
      const v = this.vocabularies[j];
      if (v !== null && v !== undefined && v.overflowed > 0)
        found.push({ feature: this.current!.features[j]!.name, codes: v.capacity, values: v.overflowed });
    }
    return found;
  }

  /** The vocabulary of feature j (null for a numeric feature). */
  vocabulary(j: number): Vocabulary | null {
    return this.vocabularies[j] ?? null;
  }

  /**
   * A decoder for labels that arrive on their own (a labels file or topic): it reads the `id` and
   * `label` columns and shares this decoder's class dictionary, so that a class has the same code in
   * both inputs whichever names it first. With `carryFeatures` it also reads this stream's feature
   * columns (sharing the schema and every vocabulary, so category codes agree too); the events' schema
   * must be known by then. With `time`, that numeric column comes last in each row (after any carried
   * features). With neither, the labels' frames have no features (`width` 0).
   *
   * @example
   * const events = new FrameDecoder({ label: 'rejected', id: 'leg_id' });
   * const labels = events.labelsDecoder({ id: 'leg_id', label: 'rejected' });
   */
  labelsDecoder(
    columns: {
      readonly id: string;
      readonly label: string;
      readonly carryFeatures?: boolean;
      readonly time?: string;
    },
    where = 'labels options',
  ): FrameDecoder {
    const carry = columns.carryFeatures === true;
    if (carry && this.current === null) {
      throw new ShoalError(
        'invalid-parameter',
        `${where}: the events' schema is not known yet, so labels cannot carry its features`,
      );
    }
    const decoder = new FrameDecoder(
      {
        id: columns.id,
        label: columns.label,
        features: [],
        maxClasses: this.options.maxClasses,
      },
      where,
    );
    decoder.labels = this.labels;
    const time: Feature[] =
      columns.time === undefined ? [] : [{ name: columns.time, kind: 'numeric', values: 0 }];
    if (carry || time.length > 0) {
      decoder.current = { features: [...(carry ? this.current!.features : []), ...time] };
      decoder.vocabularies = [...(carry ? this.vocabularies : []), ...time.map(() => null)];
    }
    return decoder;
  }

  /** The label dictionary, for readers. */
  labelDictionary(): LabelDictionary {
    return this.labels;
  }

  /**
   * Bind a source's columns to features, label and id. The first call infers the schema when it is not
   * given (or takes the one a source declares); later calls find the same features by name. Returns the
   * problem as a value when a named column is missing or a feature column cannot be read.
   */
  bind(columns: readonly SourceColumn[], declared: DeclaredSchema | null = null): Binding | BindProblem {
    const last = this.last;
    if (last !== null && sameNames(last.names, columns)) return last;
    let known = this.current?.features ?? null;
    if (known === null && declared !== null) {
      const found = this.declare(declared);
      if (typeof found === 'string') return { code: 'invalid-input', reason: found };
      known = found;
    }
    const bound = bindColumns(columns, this.options, known);
    if ('reason' in bound) return bound;
    if (this.current === null) this.settle(bound.features);
    this.labels.decide(bound.labelType === 'other' ? 'string' : bound.labelType, bound.labelCodes);
    this.last = bound.binding;
    return bound.binding;
  }

  /**
   * Decode one row of cells (aligned with the bound columns) into row `row` of the buffer. Returns what
   * is wrong with the row, or null when it decoded.
   */
  fillCells(cells: readonly unknown[], binding: Binding, row: number, ids: string[] | null): string | null {
    const schema = this.current!;
    const width = schema.features.length;
    const out = this.buffer.values;
    const base = row * width;
    for (let j = 0; j < width; j++) {
      const value = cells[binding.features[j]!];
      const vocabulary = this.vocabularies[j];
      if (vocabulary === null) {
        const n = this.cells.numeric(value);
        const problem = numericProblem(n, value);
        if (problem !== null) return `${this.column(j)}: ${problem}`;
        out[base + j] = n!;
        continue;
      }
      const name = this.cells.category(value);
      if (name === undefined) return `${this.column(j)}: expected a category, got ${showCell(value)}`;
      const code = name === null ? Number.NaN : vocabulary!.code(name);
      if (code < 0) return this.unknownCategory(j, name!);
      out[base + j] = code;
    }
    if (binding.label >= 0) {
      const value = cells[binding.label];
      const label = this.labels.read(value);
      if (label === undefined) return this.labels.explain(value);
      this.buffer.labels[row] = label;
    }
    if (ids !== null) {
      const value = cells[binding.id];
      if (value === null || value === undefined || value === '')
        return `no id in column ${JSON.stringify(this.options.id)}`;
      ids[row] = typeof value === 'object' ? JSON.stringify(value) : String(value);
    }
    return null;
  }

  /** The frame of the first `rows` rows of the buffer. */
  frame(
    rows: number,
    binding: Binding,
    ids: readonly string[] | null,
    source: string,
    unit: PositionUnit,
    batch: number,
  ): Frame {
    return this.buffer.frame(this.current!, rows, binding.label >= 0, ids, source, unit, batch);
  }

  /** `column "name"`, for messages about feature j. */
  column(j: number): string {
    return `column ${JSON.stringify(this.current!.features[j]!.name)}`;
  }

  /** The message for a category a closed vocabulary does not know. */
  unknownCategory(j: number, name: string): string {
    const known = this.vocabularies[j]!.names().map((n) => JSON.stringify(n));
    return `${this.column(j)}: ${JSON.stringify(name)} is not one of ${known.join(', ')}`;
  }

  /** The decoder's state, JSON-safe. */
  snapshot(): FrameDecoderSnapshot {
    return {
      kind: KIND,
      version: STATE_VERSION,
      state: {
        options: this.given,
        features: this.current === null ? null : this.current.features,
        categories: this.vocabularies.map((v) => (v === null ? null : [...v.names()])),
        labelMode: this.labels.mode,
        classes: [...this.labels.classes()],
      },
    };
  }

  /** A decoder that goes on where the one that took `snapshot` left off. */
  static restore(snapshot: FrameDecoderSnapshot): FrameDecoder {
    checkSnapshot(snapshot, KIND, STATE_VERSION);
    const { state } = snapshot;
    const decoder = new FrameDecoder({ ...state.options, classes: state.classes }, 'frame decoder state');
    // The classes seed the label dictionary; the options the decoder reports stay the ones it was given,
    // so that its snapshot after a restore is the snapshot it was restored from.
    decoder.given = state.options;
    decoder.labels.mode = state.labelMode;
    if (state.features === null) return decoder;
    const issues: ConfigIssue[] = [];
    const specs = state.features.map((f) => (f.kind === 'numeric' ? { name: f.name, kind: f.kind } : f));
    const features = checkFeatureSpecs(issues, 'features', specs, decoder.options.vocabulary);
    const categories = state.categories;
    const fits =
      features !== null &&
      Array.isArray(categories) &&
      categories.length === features.length &&
      features.every((f, j) => {
        const names = categories[j];
        if (f.kind === 'numeric') return names === null;
        const room = f.values > (f.categories?.length ?? 0) ? f.values - 1 : f.values;
        return Array.isArray(names) && names.length <= room && names.every((n) => typeof n === 'string');
      });
    if (!fits) {
      throw new ShoalError(
        'invalid-snapshot',
        'frame decoder state: the features and their categories do not match',
      );
    }
    decoder.settle(features!, categories);
    return decoder;
  }

  /** Fix the schema and make the vocabularies (with category names carried over from a snapshot). */
  private settle(features: readonly Feature[], known: readonly (readonly string[] | null)[] = []): void {
    this.current = { features };
    this.vocabularies = features.map((f, j) =>
      f.kind === 'nominal' ? new Vocabulary(f, known[j] ?? f.categories ?? []) : null,
    );
  }

  /** Features and classes a source declares, when the options leave them open. */
  private declare(declared: DeclaredSchema): readonly Feature[] | null | string {
    if (declared.classes !== undefined && this.labels.classes().length === 0) {
      const classes = declared.classes;
      if (!Array.isArray(classes) || !classes.every((c) => typeof c === 'string')) {
        return 'the declared classes are not a list of names';
      }
      for (const name of classes) this.labels.codeOfName(name);
    }
    if (declared.features === undefined) return null;
    const issues: ConfigIssue[] = [];
    const features = checkFeatureSpecs(issues, 'features', declared.features, this.options.vocabulary);
    if (features === null) {
      return `the declared features are not valid: ${issues.map((i) => `${i.path}: ${i.message}`).join('; ')}`;
    }
    return features;
  }
}

function sameNames(names: readonly string[], columns: readonly SourceColumn[]): boolean {
  if (names.length !== columns.length) return false;
  for (let i = 0; i < names.length; i++) if (names[i] !== columns[i]!.name) return false;
  return true;
}
