import {
  Counter,
  Gauge,
  Histogram,
  type MetricObjectWithValues,
  type MetricType,
  type MetricValueWithName,
  type OpenMetricsContentType,
  Registry,
} from 'prom-client';
import { Buckets } from './buckets.js';
import {
  DEAD_LETTER_REASONS,
  type HistogramView,
  INPUT_DRIFT_CAUSES,
  LABEL_OUTCOMES,
  REPLACEMENT_CAUSES,
  SEAT_STATES,
  SIGNAL_CAUSES,
  type SignalLevel,
  type TelemetryReading,
  type TelemetrySource,
} from './source.js';

/** Rows per batch: from single events to large replay batches. */
const BATCH_ROWS_BOUNDS = [1, 10, 50, 100, 500, 1000, 5000, 10000, 50000];
/** Seconds to score a batch: half a millisecond to five seconds. */
const SCORING_SECONDS_BOUNDS = [0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5];

/**
 * A histogram whose buckets are read from a `HistogramView` at scrape time instead of observed through
 * prom-client: the session keeps the counts in a preallocated array on its own hot path.
 */
class ViewHistogram extends Histogram {
  private readonly metricName: string;
  private readonly metricHelp: string;
  private readonly view: () => HistogramView | null;

  constructor(name: string, help: string, bounds: readonly number[], view: () => HistogramView | null) {
    super({ name, help, buckets: [...bounds], registers: [] });
    this.metricName = name;
    this.metricHelp = help;
    this.view = view;
  }

  override async get(): Promise<MetricObjectWithValues<MetricValueWithName<string>>> {
    const view = this.view();
    const values: MetricValueWithName<string>[] = [];
    if (view !== null) {
      const bucket = `${this.metricName}_bucket`;
      let cumulative = 0;
      for (let i = 0; i < view.bounds.length; i++) {
        cumulative += view.counts[i]!;
        values.push({ metricName: bucket, labels: { le: view.bounds[i]! }, value: cumulative });
      }
      values.push({ metricName: bucket, labels: { le: '+Inf' }, value: view.count });
      if (view.sum !== null)
        values.push({ metricName: `${this.metricName}_sum`, labels: {}, value: view.sum });
      values.push({ metricName: `${this.metricName}_count`, labels: {}, value: view.count });
    }
    return {
      name: this.metricName,
      help: this.metricHelp,
      // prom-client's typings declare MetricType as a numeric enum; at run time the registry writes
      // the type as the string it is given.
      type: 'histogram' as unknown as MetricType,
      values,
      aggregator: 'sum',
      collect: () => undefined,
    };
  }

  /** What the registry asks a histogram for when it writes the text format. */
  getForPromString(): Promise<MetricObjectWithValues<MetricValueWithName<string>>> {
    return this.get();
  }
}

export interface MetricsOptions {
  /** Shoal's version, for shoal_build_info. */
  readonly version: string;
}

/**
 * Shoal's metric catalogue (README, "Metrics") on registries of its own — one for the Prometheus text
 * format, one for OpenMetrics — never prom-client's global registry. Every value is read from the
 * `TelemetrySource` when a registry is scraped (one reading per scrape), except the two per-batch
 * histograms the driver records with `batch()`.
 *
 * @example
 * const metrics = new ShoalMetrics(source, { version: '0.1.0' });
 * metrics.batch(rows, seconds);             // once per scored batch
 * const text = await metrics.scrape(false); // Prometheus text format
 */
export class ShoalMetrics {
  readonly text = new Registry();
  readonly openMetrics = new Registry<OpenMetricsContentType>();
  private readonly source: TelemetrySource;
  private readonly batchRows = new Buckets(BATCH_ROWS_BOUNDS);
  private readonly scoringSeconds = new Buckets(SCORING_SECONDS_BOUNDS);
  /** The reading of the scrape in progress: taken by the first metric collected, dropped after. */
  private reading: TelemetryReading | null = null;

  constructor(source: TelemetrySource, options: MetricsOptions) {
    this.source = source;
    this.openMetrics.setContentType(Registry.OPENMETRICS_CONTENT_TYPE);
    // Each registry gets metric objects of its own: an OpenMetrics scrape renames prom-client's
    // counters in place (drops `_total` from the object's name), and a text registry sharing them
    // would print `shoal_events` instead of `shoal_events_total` after the first one.
    this.define(this.text, options);
    this.define(this.openMetrics, options);
  }

  /** Register the whole catalogue on `registry`. */
  private define(registry: Registry | Registry<OpenMetricsContentType>, options: MetricsOptions): void {
    const registers = [registry];
    const self = this;
    const shape = () => this.source.shape();

    new Gauge({
      name: 'shoal_build_info',
      help: 'Always 1: the versions of Shoal and Node.js and the ensemble kind.',
      labelNames: ['version', 'nodejs', 'ensemble'],
      registers,
      collect() {
        this.reset();
        this.set(
          { version: options.version, nodejs: process.versions.node, ensemble: shape()?.ensemble ?? 'none' },
          1,
        );
      },
    });
    new Counter({
      name: 'shoal_events_total',
      help: 'Events scored, and events the ensemble trained on.',
      labelNames: ['outcome'],
      registers,
      collect() {
        const r = self.current();
        this.reset();
        this.inc({ outcome: 'scored' }, r.scored);
        this.inc({ outcome: 'trained' }, r.trained);
      },
    });
    new Counter({
      name: 'shoal_dead_letters_total',
      help: 'Events that could not be scored, by reason (each went to dead letters or the rejects file).',
      labelNames: ['reason'],
      registers,
      collect() {
        const r = self.current();
        this.reset();
        for (const reason of DEAD_LETTER_REASONS) this.inc({ reason }, r.deadLetters[reason]);
      },
    });
    for (const h of [
      new ViewHistogram(
        'shoal_batch_rows',
        'Rows per scored batch.',
        BATCH_ROWS_BOUNDS,
        () => this.batchRows,
      ),
      new ViewHistogram(
        'shoal_scoring_seconds',
        'Seconds to score one batch.',
        SCORING_SECONDS_BOUNDS,
        () => this.scoringSeconds,
      ),
      new ViewHistogram(
        'shoal_label_delay_seconds',
        'Seconds from scoring an event to the arrival of its label, for joined labels.',
        [1],
        () => (shape()?.pending ? this.current().labelDelaySeconds : null),
      ),
    ]) {
      for (const r of registers) r.registerMetric(h);
    }
    new Gauge({
      name: 'shoal_accuracy',
      help: 'Ensemble accuracy over the evaluation window (NaN before the first label).',
      registers,
      collect() {
        this.set(orNaN(self.current().accuracy));
      },
    });
    new Gauge({
      name: 'shoal_kappa',
      help: "Cohen's kappa of the ensemble over the evaluation window (NaN before the first label).",
      registers,
      collect() {
        this.set(orNaN(self.current().kappa));
      },
    });
    new Gauge({
      name: 'shoal_seat_accuracy',
      help: "Each seat's member's accuracy over its recent rows (NaN before any).",
      labelNames: ['seat'],
      registers,
      collect() {
        this.reset();
        for (const s of self.current().seats) this.set({ seat: s.seat }, orNaN(s.accuracy));
      },
    });
    new Gauge({
      name: 'shoal_seat_state',
      help: "1 for the state a seat's member is in, 0 for the other states.",
      labelNames: ['seat', 'state'],
      registers,
      collect() {
        this.reset();
        for (const s of self.current().seats)
          for (const state of SEAT_STATES) this.set({ seat: s.seat, state }, s.state === state ? 1 : 0);
      },
    });
    new Counter({
      name: 'shoal_drift_signals_total',
      help: "Member monitors' drift signals by seat, detector, level and cause.",
      labelNames: ['seat', 'detector', 'level', 'cause'],
      registers,
      collect() {
        this.reset();
        const s = shape();
        if (s === null || s.detector === null) return;
        const r = self.current();
        for (let seat = 0; seat < s.seats; seat++) {
          for (const level of Object.keys(SIGNAL_CAUSES) as SignalLevel[]) {
            for (const cause of SIGNAL_CAUSES[level])
              this.inc({ seat, detector: s.detector, level, cause }, r.signalCount(seat, level, cause));
          }
        }
      },
    });
    new Counter({
      name: 'shoal_replacements_total',
      help: 'Members replaced, by how the seat got its new member.',
      labelNames: ['cause'],
      registers,
      collect() {
        this.reset();
        if (shape() === null) return;
        const r = self.current();
        for (const cause of REPLACEMENT_CAUSES) this.inc({ cause }, r.replacements[cause]);
      },
    });
    new Counter({
      name: 'shoal_input_drift_signals_total',
      help: 'Input features whose distribution moved, by feature and the test that flagged it.',
      labelNames: ['feature', 'cause'],
      registers,
      collect() {
        this.reset();
        const s = shape();
        if (s === null) return;
        const counts = self.current().inputDrift;
        s.features.forEach((f, i) => {
          this.inc({ feature: f.name, cause: INPUT_DRIFT_CAUSES[f.kind] }, counts[i] ?? 0);
        });
      },
    });
    new Gauge({
      name: 'shoal_pending_labels',
      help: 'Predictions waiting for their label.',
      registers,
      collect() {
        this.set(self.current().pending);
      },
    });
    new Gauge({
      name: 'shoal_pending_labels_capacity',
      help: 'The cap on predictions waiting for their label.',
      registers,
      collect() {
        this.set(self.current().pendingCapacity);
      },
    });
    new Gauge({
      name: 'shoal_early_labels',
      help: 'Labels that came before their event, held for it.',
      registers,
      collect() {
        this.set(self.current().early);
      },
    });
    new Counter({
      name: 'shoal_labels_total',
      help: 'Labels by outcome: joined to their prediction, prediction expired unlabelled, no prediction found, too late.',
      labelNames: ['outcome'],
      registers,
      collect() {
        const r = self.current();
        this.reset();
        for (const outcome of LABEL_OUTCOMES) this.inc({ outcome }, r.labels[outcome]);
      },
    });
    new Gauge({
      name: 'shoal_consumer_lag',
      help: 'Events on a partition not yet consumed.',
      labelNames: ['topic', 'partition'],
      registers,
      collect() {
        this.reset();
        for (const l of self.current().lag) this.set({ topic: l.topic, partition: l.partition }, l.lag);
      },
    });
    new Gauge({
      name: 'shoal_checkpoint_age_seconds',
      help: 'Seconds since the last checkpoint was written (published only when checkpoints are on).',
      registers,
      collect() {
        const age = shape()?.checkpoints ? self.current().checkpointAgeSeconds : null;
        if (age === null) this.remove();
        else this.set(age);
      },
    });
    new Gauge({
      name: 'shoal_model_bytes',
      help: 'Estimated size of the ensemble in memory, in bytes.',
      registers,
      collect() {
        this.set(self.current().modelBytes);
      },
    });
  }

  /** Record one scored batch: its rows and the seconds it took. Allocates nothing. */
  batch(rows: number, seconds: number): void {
    this.batchRows.observe(rows);
    this.scoringSeconds.observe(seconds);
  }

  /** The exposition of every metric: OpenMetrics when asked, else the Prometheus text format. */
  async scrape(openMetrics: boolean): Promise<{ contentType: string; body: string }> {
    const registry = openMetrics ? this.openMetrics : this.text;
    try {
      return { contentType: registry.contentType, body: await registry.metrics() };
    } finally {
      this.reading = null;
    }
  }

  /** One reading per scrape: the first metric collected takes it, the rest share it. */
  private current(): TelemetryReading {
    this.reading ??= this.source.read();
    return this.reading;
  }
}

function orNaN(value: number | null): number {
  return value ?? Number.NaN;
}
