import { numericSchema } from '../../src/core/index.js';
import { Bagging, Verdict } from '../../src/ensembles/index.js';
import { type BenchFn, type BenchRow, machine } from './harness.js';
import { benchStream } from './stream.js';

/** Each segment's rows are generated and run in this many parts. */
const PARTS = 10;

/** Collects the heap, waits for array buffers freed in the background, and collects again. */
async function settle(): Promise<void> {
  globalThis.gc?.();
  await new Promise((resolve) => setTimeout(resolve, 100));
  globalThis.gc?.();
}

/**
 * Long run and memory: 10-member bagging (λ = 1, no lifecycle, the tree's default memory cap) over
 * 5,000,000 rows of the benchmark stream, generated a tenth of a segment at a time so that the data
 * hardly count in the process's memory: a whole million-row segment of input is 80 MiB, which the
 * allocator hands back to the system at its own pace, so the resident set measured after a segment
 * swung by that much from run to run (161 or 243 MiB after the same segment). After each segment the
 * heap is collected twice, 100 ms apart, so that array buffers freed on V8's background threads are
 * gone before memory is read. Reports rows per second of each million-row segment, model bytes, the
 * resident set size and the live memory (V8's used heap plus memory outside it) after each segment,
 * and the ratios of the last segment to the first. The live memory is the steadier measure of growth:
 * the resident set also holds what the C allocator keeps after a free, which differs between runs.
 */
export const bench: BenchFn = async ({ quick }) => {
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
  const live: number[] = [];
  const model: number[] = [];
  for (let s = 0; s < segments; s++) {
    let correct = 0;
    let elapsed = 0n;
    for (let part = 0; part < PARTS; part++) {
      const { rows: values, labels } = benchStream(segment / PARTS, `bench-memory-${s}-${part}`);
      const t0 = process.hrtime.bigint();
      for (let i = 0; i < labels.length; i++) {
        bag.scoreTrain(values, i * width, labels[i]!, verdict);
        if (verdict.predicted === labels[i]) correct++;
      }
      elapsed += process.hrtime.bigint() - t0;
    }
    const rate = segment / (Number(elapsed) / 1e9);
    await settle();
    const memory = process.memoryUsage();
    rates.push(rate);
    rss.push(memory.rss);
    live.push(memory.heapUsed + memory.external);
    model.push(bag.sizeBytes());
    rows.push({
      name: `segment ${s + 1} (rows ${s * segment + 1}–${(s + 1) * segment})`,
      rate,
      unit: 'rows/s',
      accuracy: correct / segment,
      note: `model ${(model[s]! / 2 ** 20).toFixed(1)} MiB, RSS ${(rss[s]! / 2 ** 20).toFixed(0)} MiB, live ${(live[s]! / 2 ** 20).toFixed(0)} MiB`,
    });
  }
  const json = {
    machine: machine(),
    segmentRows: segment,
    rowsPerSecond: rates,
    modelBytes: model,
    rss,
    live,
    throughputRatio5M: rates[segments - 1]! / rates[0]!,
    rssRatio5M: rss[segments - 1]! / rss[0]!,
    liveRatio5M: live[segments - 1]! / live[0]!,
  };
  rows.push({
    name: 'last segment / first segment',
    rate: json.throughputRatio5M,
    unit: '× rows/s',
    note: `RSS ratio ${json.rssRatio5M.toFixed(2)}, live memory ratio ${json.liveRatio5M.toFixed(2)}`,
  });
  return { title: `Long run and memory (${segments} × ${segment} rows)`, rows, json };
};
