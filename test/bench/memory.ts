import { numericSchema } from '../../src/core/index.js';
import { Bagging, Verdict } from '../../src/ensembles/index.js';
import { type BenchFn, type BenchRow, machine } from './harness.js';
import { benchStream } from './stream.js';

/**
 * Long run and memory: 10-member bagging (λ = 1, no lifecycle, the tree's default memory cap) over
 * 5,000,000 rows of the benchmark stream, generated a segment at a time so that the data does not
 * count in the process's memory. Reports rows per second of each million-row segment, model bytes and
 * resident set size after the first and the last segment, and their ratios.
 */
export const bench: BenchFn = ({ quick }) => {
  const segment = quick ? 100_000 : 1_000_000;
  const segments = 5;
  const width = 10;
  const bag = new Bagging(
    numericSchema(width),
    { members: 10, lambda: 1, lifecycle: { enabled: false } },
    'bench-memory',
  );
  bag.ensureClasses(2);
  const verdict = new Verdict();
  const rows: BenchRow[] = [];
  const rates: number[] = [];
  const rss: number[] = [];
  const model: number[] = [];
  for (let s = 0; s < segments; s++) {
    const { rows: values, labels } = benchStream(segment, `bench-memory-${s}`);
    const t0 = process.hrtime.bigint();
    let correct = 0;
    for (let i = 0; i < segment; i++) {
      bag.scoreTrain(values, i * width, labels[i]!, verdict);
      if (verdict.predicted === labels[i]) correct++;
    }
    const rate = segment / (Number(process.hrtime.bigint() - t0) / 1e9);
    globalThis.gc?.();
    rates.push(rate);
    rss.push(process.memoryUsage().rss);
    model.push(bag.sizeBytes());
    rows.push({
      name: `segment ${s + 1} (rows ${s * segment + 1}–${(s + 1) * segment})`,
      rate,
      unit: 'rows/s',
      accuracy: correct / segment,
      note: `model ${(model[s]! / 2 ** 20).toFixed(1)} MiB, RSS ${(rss[s]! / 2 ** 20).toFixed(0)} MiB`,
    });
  }
  const json = {
    machine: machine(),
    segmentRows: segment,
    rowsPerSecond: rates,
    modelBytes: model,
    rss,
    throughputRatio5M: rates[segments - 1]! / rates[0]!,
    rssRatio5M: rss[segments - 1]! / rss[0]!,
  };
  rows.push({
    name: 'last segment / first segment',
    rate: json.throughputRatio5M,
    unit: '× rows/s',
    note: `RSS ratio ${json.rssRatio5M.toFixed(2)}`,
  });
  return { title: `Long run and memory (${segments} × ${segment} rows)`, rows, json };
};
