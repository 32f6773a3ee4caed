import type { FeatureSchema } from '../core/index.js';
import { createInputMonitor, type InputMonitor } from '../drift/index.js';
import { createEnsemble, type Ensemble, Verdict } from '../ensembles/index.js';
import { ClassificationEvaluator, type ClassificationFigures, orNull } from '../evaluation/index.js';
import {
  isDriftSignal,
  JOURNAL_VERSION,
  type JournalRecord,
  type LabelCounts,
  type LifecycleChange,
  type SummaryRecord,
  type ViewFigures,
} from '../journal/index.js';
import type { RunConfig } from './config.js';

/**
 * The learning loop: for each row, score it, judge the served prediction when its label is known,
 * then train — the prequential (test-then-train) step, for every source alike. The loop owns the
 * ensemble, the evaluator and the input-drift monitor; it writes every lifecycle change, input drift
 * and evaluation window to the journal it is given. It does no I/O itself.
 *
 * @example
 * const loop = new LearningLoop({ config, source: 'legs.arrow', journal: (r) => out.write(r), clock, version });
 * for await (const { frame } of readFrames('legs.arrow', decoder)) loop.prequential(frame, decoder.classes);
 * const summary = loop.finish(decoder.classes);
 */
export interface LoopOptions {
  readonly config: RunConfig;
  /** Where the rows come from, for the journal. */
  readonly source: string;
  readonly journal: (record: JournalRecord) => void;
  /** Milliseconds from any fixed origin (injected so that runs can be timed and tests can be exact). */
  readonly clock: () => number;
  /** Shoal's version, for the journal. */
  readonly version: string;
}

/** The rows the loop needs from a batch: row-major values, the schema, and labels (NaN = none). */
export interface RowBatch {
  readonly schema: FeatureSchema;
  readonly rows: number;
  readonly width: number;
  readonly values: Float64Array;
  readonly labels: Float64Array | null;
}

export class LearningLoop {
  readonly config: RunConfig;
  private readonly options: LoopOptions;
  private ensemble: Ensemble | null = null;
  private monitor: InputMonitor | null = null;
  private readonly evaluator: ClassificationEvaluator;
  private readonly verdict = new Verdict();
  private started = 0;
  private schema: FeatureSchema | null = null;
  /** Rows seen (scored), and rows evaluated (labelled). */
  rows = 0;
  evaluated = 0;
  driftSignals = 0;
  warnings = 0;
  replacements = 0;
  inputDrifts = 0;

  constructor(options: LoopOptions) {
    this.options = options;
    this.config = options.config;
    this.evaluator = new ClassificationEvaluator({
      window: options.config.evaluation.window,
      fading: options.config.evaluation.fading,
    });
  }

  /** The ensemble (built from the first batch's schema). */
  get model(): Ensemble | null {
    return this.ensemble;
  }

  /** Accuracy over the evaluation window, or null before the first labelled row. */
  get recentAccuracy(): number | null {
    return this.evaluated > 0 ? orNull(this.evaluator.windowed.accuracy()) : null;
  }

  /** Score every row of a batch; rows with a label are judged and then trained on. */
  prequential(batch: RowBatch, classes: readonly string[]): void {
    const ensemble = this.ensure(batch.schema, classes);
    const { values, labels, width } = batch;
    const verdict = this.verdict;
    const monitor = this.monitor;
    const every = this.config.evaluation.journalEvery;
    for (let r = 0; r < batch.rows; r++) {
      const offset = r * width;
      if (monitor !== null) {
        const flagged = monitor.update(values, offset);
        if (flagged > 0) this.inputDrift(monitor, flagged);
      }
      const label = labels === null ? Number.NaN : labels[r]!;
      this.rows++;
      if (Number.isNaN(label)) {
        ensemble.score(values, offset, verdict);
        continue;
      }
      ensemble.scoreTrain(values, offset, label, verdict);
      this.evaluator.record(
        verdict.predicted,
        label,
        label < verdict.classes ? verdict.probabilities[label]! : 0,
      );
      if (++this.evaluated % every === 0) this.window();
    }
  }

  /** Close the run: the final figures, also written to the journal. */
  finish(classes: readonly string[]): SummaryRecord {
    if (this.evaluated % this.config.evaluation.journalEvery !== 0 && this.evaluated > 0) this.window();
    const cumulative = this.evaluator.summary().cumulative;
    const seconds = Math.max(1e-9, (this.options.clock() - this.started) / 1000);
    const summary: SummaryRecord = {
      type: 'summary',
      scored: this.rows,
      trained: this.evaluated,
      rows: this.evaluated,
      accuracy: cumulative.accuracy,
      kappa: cumulative.kappa,
      kappaM: cumulative.kappaM,
      kappaNoChange: cumulative.kappaNoChange,
      logLoss: cumulative.logLoss,
      macroF1: cumulative.macroF1,
      classes: [...classes],
      confusion: square(cumulative.confusion, classes.length),
      driftSignals: this.driftSignals,
      warnings: this.warnings,
      replacements: this.replacements,
      inputDrifts: this.inputDrifts,
      labels: this.labels(),
      seconds,
      rowsPerSecond: this.rows / seconds,
    };
    this.options.journal(summary);
    return summary;
  }

  /** Build the ensemble and monitor on the first batch; announce classes as they appear. */
  private ensure(schema: FeatureSchema, classes: readonly string[]): Ensemble {
    if (this.ensemble === null) {
      const { config, version, source, clock } = this.options;
      this.schema = schema;
      this.started = clock();
      this.options.journal({
        type: 'run',
        version: JOURNAL_VERSION,
        shoal: version,
        startedAt: new Date().toISOString(),
        source,
        config: config as unknown as Record<string, unknown>,
        schema,
        seed: config.seed,
      });
      this.ensemble = createEnsemble(config.ensemble, schema, config.seed, (r) => this.lifecycle(r));
      if (config.inputs.monitor) this.monitor = createInputMonitor(schema);
    }
    const n = Math.max(1, classes.length);
    if (n > this.ensemble.classes) {
      this.ensemble.ensureClasses(n);
      this.evaluator.ensureClasses(n);
    }
    return this.ensemble;
  }

  private lifecycle(change: LifecycleChange): void {
    if (isDriftSignal(change.cause)) this.driftSignals++;
    if (change.to === 'watched') this.warnings++;
    if (change.to === 'retired') this.replacements++;
    this.options.journal({ ...change, scored: this.rows });
  }

  private labels(): LabelCounts {
    return {
      inline: this.evaluated,
      joined: 0,
      duplicate: 0,
      late: 0,
      evicted: 0,
      unknown: 0,
      trainedUnmatched: 0,
      expiredPredictions: 0,
      evictedPredictions: 0,
      pending: 0,
    };
  }

  private inputDrift(monitor: InputMonitor, count: number): void {
    const features = this.schema!.features;
    for (let i = 0; i < count; i++) {
      const f = features[monitor.flagged[i]!]!;
      this.inputDrifts++;
      this.options.journal({
        type: 'input-drift',
        scored: this.rows,
        trained: this.evaluated,
        feature: f.name,
        kind: f.kind,
      });
    }
  }

  private window(): void {
    const s = this.evaluator.summary();
    this.options.journal({
      type: 'window',
      scored: this.rows,
      trained: this.evaluated,
      window: figures(s.windowed),
      cumulative: figures(s.cumulative),
      seats: this.ensemble!.seats().map((seat) => seat.recentAccuracy),
      labels: this.labels(),
    });
  }
}

function figures(f: ClassificationFigures): ViewFigures {
  return {
    rows: f.rows,
    accuracy: f.accuracy,
    kappa: f.kappa,
    kappaM: f.kappaM,
    kappaNoChange: f.kappaNoChange,
    logLoss: f.logLoss,
  };
}

/** The confusion matrix padded to `n` × `n` (classes named but never seen have zero rows). */
function square(confusion: readonly (readonly number[])[], n: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => confusion[i]?.[j] ?? 0));
}
