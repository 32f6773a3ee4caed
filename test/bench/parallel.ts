import { Bagging, BatchVerdicts, Verdict } from '../../dist/ensembles/index.js';
import { ParallelBagging, ShardPool } from '../../dist/parallel/index.js';
import { numericSchema } from '../../src/core/index.js';
import { type BenchFn, type BenchRow, machine, median } from './harness.js';
import { benchStream } from './stream.js';

/**
 * Parallel members: online bagging (λ = 1) of 10 and 30 Hoeffding trees, without the member lifecycle
 * and with it (ADWIN monitors, understudies, the proof gate), with the members split over two worker
 * threads (the build in dist/ is used, since workers load compiled files), against the same ensemble in
 * one thread. They go through the same rows side by side, taking turns a block of 20,000 rows at a time
 * (the order of turns rotates), so that all see the same machine however its load moves; each is timed
 * from its first quarter of rows on, three times over. The worker threads come from one pool for the
 * whole section (`ShardPool`), as a service's do, so that after the first run their compiled code is as
 * warm as this thread's (new threads each run started cold, against a warm one thread). Rows go to the
 * threads in batches of 1,000, each sent before the verdicts of the ones before it are read (as many out
 * at a time as `ParallelBagging` allows, `batchesOut`: three), so the workers do not wait while this
 * thread checks them (only the last batches of a block are read with none behind them); a second pair
 * of threads takes one batch at a time (each awaited before the next is sent), to show what having
 * several out gains. The verdicts are checked to be identical.
 */
const BATCH = 1000;
/** Batches one side runs before the next takes its turn. */
const BLOCK = 20;
const RUNS = 3;
type Side = 'one' | 'two' | 'single-file';
const SIDES: readonly Side[] = ['one', 'two', 'single-file'];

export const bench: BenchFn = async ({ quick }) => {
  const count = quick ? 40_000 : 400_000;
  // Rows before the timing starts in every run, so that each thread's compiler has warmed up.
  const warm = count / 4;
  const { rows: values, labels: codes, width } = benchStream(count, 'bench-parallel');
  const labels = Float64Array.from(codes);
  const schema = numericSchema(width);
  const rows: BenchRow[] = [];
  const json: Record<string, unknown> = {
    machine: machine(),
    rows: count,
    batch: BATCH,
    block: BLOCK * BATCH,
  };
  const expected = new Float64Array(count);
  const got = { two: new Float64Array(count), 'single-file': new Float64Array(count) };
  // The threads go back to a pool between runs, so their code is as warm as this thread's.
  const pool = new ShardPool();
  for (const [members, lifecycle] of [
    [10, false],
    [30, false],
    [10, true],
    [30, true],
  ] as const) {
    const spec = { members, lambda: 1, lifecycle: { enabled: lifecycle } };
    const label = `bagging ×${members}${lifecycle ? ', lifecycle on' : ''}`;
    const rates: Record<Side, number[]> = { one: [], two: [], 'single-file': [] };
    let identical = true;
    for (let run = 0; run < RUNS; run++) {
      const single = new Bagging(schema, spec, 'bench-parallel');
      single.ensureClasses(2);
      const verdict = new Verdict();
      const alone = (from: number, to: number): void => {
        for (let i = from; i < to; i++) {
          single.scoreTrain(values, i * width, labels[i]!, verdict);
          expected[i] = verdict.probabilities[1]!;
        }
      };
      const pairs = {
        two: await ParallelBagging.start(schema, spec, 'bench-parallel', 2, () => {}, pool),
        'single-file': await ParallelBagging.start(schema, spec, 'bench-parallel', 2, () => {}, pool),
      };
      const out = ParallelBagging.batchesOut;
      const outs = Array.from({ length: out }, () => new BatchVerdicts());
      const threaded = async (side: 'two' | 'single-file', from: number, to: number): Promise<void> => {
        const parallel = pairs[side];
        const into = got[side];
        const sent: { done: Promise<void>; s: number }[] = [];
        const read = async (): Promise<void> => {
          const { done, s } = sent.shift()!;
          await done;
          const verdicts = outs[(s / BATCH) % out]!;
          for (let r = 0; r < BATCH; r++) into[s + r] = verdicts.probabilities[r * 2 + 1]!;
        };
        for (let s = from; s < to; s += BATCH) {
          if (sent.length === (side === 'two' ? out : 1)) await read();
          const verdicts = outs[(s / BATCH) % out]!;
          sent.push({
            done: parallel.scoreTrainBatch(values.subarray(s * width), labels.subarray(s), BATCH, verdicts),
            s,
          });
        }
        while (sent.length > 0) await read();
      };
      for (const pair of Object.values(pairs)) pair.ensureClasses(2);
      const seconds: Record<Side, number> = { one: 0, two: 0, 'single-file': 0 };
      for (let from = 0, block = 0; from < count; from += BLOCK * BATCH, block++) {
        const to = Math.min(count, from + BLOCK * BATCH);
        for (let k = 0; k < SIDES.length; k++) {
          const side = SIDES[(block + k) % SIDES.length]!;
          const t0 = process.hrtime.bigint();
          if (side === 'one') alone(from, to);
          else await threaded(side, from, to);
          if (from >= warm) seconds[side] += Number(process.hrtime.bigint() - t0) / 1e9;
        }
      }
      for (const pair of Object.values(pairs)) await pair.close();
      for (const side of SIDES) rates[side].push((count - warm) / seconds[side]);
      if (Object.values(got).some((g) => g.some((p, i) => p !== expected[i]))) identical = false;
    }
    const one = median(rates.one);
    const speedup = median(rates.two) / one;
    const singleFile = median(rates['single-file']) / one;
    rows.push({ name: `${label}, one thread`, rate: one, unit: 'rows/s' });
    rows.push({
      name: `${label}, two threads`,
      rate: median(rates.two),
      unit: 'rows/s',
      note: `speed-up ${speedup.toFixed(2)}×, verdicts ${identical ? 'identical' : 'DIFFERENT'} to one thread`,
    });
    rows.push({
      name: `${label}, two threads, one batch out at a time`,
      rate: median(rates['single-file']),
      unit: 'rows/s',
      note: `speed-up ${singleFile.toFixed(2)}×`,
    });
    json[`bagging${members}${lifecycle ? 'Lifecycle' : ''}`] = {
      oneThread: one,
      twoThreads: median(rates.two),
      speedup,
      oneBatchOut: median(rates['single-file']),
      speedupOneBatchOut: singleFile,
      identical,
    };
  }
  await pool.close();
  return { title: 'Parallel members (two threads)', rows, json };
};
