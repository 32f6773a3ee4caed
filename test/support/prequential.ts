import type { Ensemble } from '../../src/ensembles/index.js';
import { Verdict } from '../../src/ensembles/index.js';
import type { LifecycleChange } from '../../src/journal/index.js';
import type { StreamGenerator } from '../../src/streams/index.js';

/** What a prequential (test-then-train) run over a generator measured. */
export interface PrequentialRun {
  readonly accuracy: number;
  /** 1 where the ensemble's prediction was right, row by row. */
  readonly hits: Uint8Array;
}

/** Run `rows` rows of `generator` through `ensemble`, scoring each row before training on it. */
export function prequential(ensemble: Ensemble, generator: StreamGenerator, rows: number): PrequentialRun {
  const width = generator.schema.features.length;
  const row = new Float64Array(width);
  const verdict = new Verdict();
  ensemble.ensureClasses(generator.classes.length);
  const hits = new Uint8Array(rows);
  let correct = 0;
  for (let i = 0; i < rows; i++) {
    const label = generator.next(row, 0);
    ensemble.scoreTrain(row, 0, label, verdict);
    if (verdict.predicted === label) {
      hits[i] = 1;
      correct++;
    }
  }
  return { accuracy: correct / rows, hits };
}

/** Accuracy over the `window` rows ending at each row (NaN before the window fills). */
export function windowed(hits: Uint8Array, window: number): Float64Array {
  const out = new Float64Array(hits.length).fill(Number.NaN);
  let sum = 0;
  for (let i = 0; i < hits.length; i++) {
    sum += hits[i]!;
    if (i >= window) sum -= hits[i - window]!;
    if (i >= window - 1) out[i] = sum / window;
  }
  return out;
}

/** A journal that keeps every record. */
export function recordingJournal(): { records: LifecycleChange[]; sink: (r: LifecycleChange) => void } {
  const records: LifecycleChange[] = [];
  return { records, sink: (r) => records.push(r) };
}
