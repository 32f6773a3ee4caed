import { readdirSync, readFileSync } from 'node:fs';
import { cpus } from 'node:os';

/**
 * The benchmark harness: every section measures rates as the median of several timed runs after a
 * warm-up, in one process, so that figures and the ratios between them come from the same run.
 * Benchmarks print; they never assert a time.
 */

export interface BenchOptions {
  /** A smaller version for CI smoke runs. */
  readonly quick: boolean;
}

export interface BenchRow {
  readonly name: string;
  /** Items (rows, values) per second: the median over runs. */
  readonly rate: number;
  /** What `rate` counts, for the printed table. */
  readonly unit: string;
  /** `rate` divided by the floor (a bare loop over the same data) measured in the same run. */
  readonly ofFloor?: number;
  /** Prequential accuracy beside a speed, so that speed never hides a loss of quality. */
  readonly accuracy?: number;
  readonly note?: string;
}

export interface BenchSection {
  readonly title: string;
  readonly rows: readonly BenchRow[];
  /** Fields for `npm run bench -- --json`, merged under the section's key. */
  readonly json: Readonly<Record<string, unknown>>;
}

export type BenchFn = (options: BenchOptions) => Promise<BenchSection> | BenchSection;

/** Median of a list of numbers. */
export function median(values: readonly number[]): number {
  const s = [...values].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

/**
 * Run `body` `warmup` times untimed and `runs` times timed; each call processes `items` items.
 * Returns the median rate in items per second. `body` returns a number that is folded into a
 * sink so the work cannot be optimised away.
 */
export function medianRate(items: number, body: () => number, runs = 3, warmup = 1): number {
  let sink = 0;
  for (let i = 0; i < warmup; i++) sink += body();
  const rates: number[] = [];
  for (let i = 0; i < runs; i++) {
    const t0 = process.hrtime.bigint();
    sink += body();
    const ns = Number(process.hrtime.bigint() - t0);
    rates.push(items / (ns / 1e9));
  }
  if (Number.isNaN(sink)) process.stdout.write('');
  return median(rates);
}

/**
 * Several bodies timed in rounds: each round times every body once (after `warmup` untimed rounds),
 * starting one further along the list each round, so that all of them see the same load of a shared
 * host however it moves. Returns each body's rates (items per second), one a timed round, in the order
 * of `bodies`; `items[i]` is what body i processes per call.
 */
export function roundRates(
  items: readonly number[],
  bodies: readonly (() => number)[],
  rounds = 3,
  warmup = 1,
): number[][] {
  let sink = 0;
  const rates = bodies.map((): number[] => []);
  for (let round = 0; round < warmup + rounds; round++) {
    for (let k = 0; k < bodies.length; k++) {
      const i = (round + k) % bodies.length;
      const t0 = process.hrtime.bigint();
      sink += bodies[i]!();
      const ns = Number(process.hrtime.bigint() - t0);
      if (round >= warmup) rates[i]!.push(items[i]! / (ns / 1e9));
    }
  }
  if (Number.isNaN(sink)) process.stdout.write('');
  return rates;
}

/**
 * The median of the rounds' ratios of two bodies' rates from `roundRates`: on a host whose speed drifts
 * it is steadier than the ratio of the two medians.
 */
export function roundRatio(rates: readonly number[], reference: readonly number[]): number {
  return median(rates.map((r, i) => r / reference[i]!));
}

/**
 * The floor: a bare loop that reads every value of every row once, over the same data as the
 * measured work. A learner's rate divided by this shows its cost per row in units of "one pass".
 */
export function floorRate(values: Float64Array, rows: number, runs = 3): number {
  const width = values.length / rows;
  return medianRate(
    rows,
    () => {
      let s = 0;
      for (let r = 0; r < rows; r++) {
        const off = r * width;
        for (let j = 0; j < width; j++) s += values[off + j]!;
      }
      return s;
    },
    runs,
  );
}

export function machine(): { cores: number; node: string; cpu: string; l2: string } {
  const list = cpus();
  return { cores: list.length, node: process.version, cpu: list[0]?.model ?? 'unknown', l2: l2Size() };
}

/**
 * The L2 cache of one core as the kernel reports it (`/sys/devices/system/cpu/cpu0/cache`, e.g.
 * `1024K`), or `unknown` where there is no such directory: the engine's rate depends on whether ten
 * trees' leaves fit in it, so every printed figure names it.
 */
function l2Size(): string {
  const dir = '/sys/devices/system/cpu/cpu0/cache';
  try {
    for (const index of readdirSync(dir)) {
      if (!index.startsWith('index')) continue;
      const read = (name: string) => readFileSync(`${dir}/${index}/${name}`, 'utf8').trim();
      if (read('level') === '2' && read('type') !== 'Instruction') return read('size');
    }
  } catch {
    return 'unknown';
  }
  return 'unknown';
}
