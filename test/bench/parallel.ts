import { Bagging, BatchVerdicts, Verdict } from '../../dist/ensembles/index.js';
import { ParallelBagging } from '../../dist/parallel/index.js';
import { numericSchema } from '../../src/core/index.js';
import { type BenchFn, type BenchRow, machine, median } from './harness.js';
import { benchStream } from './stream.js';

/**
 * Parallel members: online bagging (λ = 1) of 10 and 30 Hoeffding trees, without the member lifecycle
 * and with it (ADWIN monitors, understudies, the proof gate), with the members split over two worker
 * threads (the build in dist/ is used, since workers load compiled files), against the same ensemble in
 * one thread, timed alternately so that both see the same machine, each timed after its first quarter
 * of rows (a worker's compiler starts cold). Rows go to the threads in batches of 1,000, each sent before
 * the verdicts of the one before it are read (two out at a time, as `ParallelBagging` allows), so the
 * workers do not wait while this thread checks them. The verdicts are checked to be identical.
 */
const BATCH = 1000;

export const bench: BenchFn = async ({ quick }) => {
  const count = quick ? 40_000 : 400_000;
  // Rows before the timing starts in every run, so that each thread's compiler has warmed up.
  const warm = count / 4;
  const { rows: values, labels: codes, width } = benchStream(count, 'bench-parallel');
  const labels = Float64Array.from(codes);
  const schema = numericSchema(width);
  const rows: BenchRow[] = [];
  const json: Record<string, unknown> = { machine: machine(), rows: count, batch: BATCH };
  for (const [members, lifecycle] of [
    [10, false],
    [30, false],
    [10, true],
    [30, true],
  ] as const) {
    const spec = { members, lambda: 1, lifecycle: { enabled: lifecycle } };
    const label = `bagging ×${members}${lifecycle ? ', lifecycle on' : ''}`;
    const one: number[] = [];
    const two: number[] = [];
    let identical = true;
    for (let run = 0; run < 3; run++) {
      const single = new Bagging(schema, spec, 'bench-parallel');
      single.ensureClasses(2);
      const verdict = new Verdict();
      const expected = new Float64Array(count);
      let t0 = 0n;
      for (let i = 0; i < count; i++) {
        if (i === warm) t0 = process.hrtime.bigint();
        single.scoreTrain(values, i * width, labels[i]!, verdict);
        expected[i] = verdict.probabilities[1]!;
      }
      one.push((count - warm) / (Number(process.hrtime.bigint() - t0) / 1e9));
      const parallel = await ParallelBagging.start(schema, spec, 'bench-parallel', 2);
      parallel.ensureClasses(2);
      const outs = [new BatchVerdicts(), new BatchVerdicts()];
      const check = async (done: Promise<void>, s: number): Promise<void> => {
        await done;
        const out = outs[(s / BATCH) % 2]!;
        for (let r = 0; r < BATCH; r++)
          if (out.probabilities[r * 2 + 1] !== expected[s + r]) identical = false;
      };
      let ahead: Promise<void> = Promise.resolve();
      for (let s = 0; s < count; s += BATCH) {
        if (s === warm) t0 = process.hrtime.bigint();
        const out = outs[(s / BATCH) % 2]!;
        const done = parallel.scoreTrainBatch(values.subarray(s * width), labels.subarray(s), BATCH, out);
        await ahead;
        ahead = check(done, s);
      }
      await ahead;
      two.push((count - warm) / (Number(process.hrtime.bigint() - t0) / 1e9));
      await parallel.close();
    }
    const speedup = median(two) / median(one);
    rows.push({ name: `${label}, one thread`, rate: median(one), unit: 'rows/s' });
    rows.push({
      name: `${label}, two threads`,
      rate: median(two),
      unit: 'rows/s',
      note: `speed-up ${speedup.toFixed(2)}×, verdicts ${identical ? 'identical' : 'DIFFERENT'} to one thread`,
    });
    json[`bagging${members}${lifecycle ? 'Lifecycle' : ''}`] = {
      oneThread: median(one),
      twoThreads: median(two),
      speedup,
      identical,
    };
  }
  return { title: 'Parallel members (two threads)', rows, json };
};
