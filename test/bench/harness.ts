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
 * `medianRate` for a measured body and its reference taken in turns, each timed run of one next to a
 * timed run of the other (the order swapped every pair), so that both see the same load of a shared
 * host. `ratio` is the median of the pairs' ratios (body over reference): on a host whose speed drifts
 * it is steadier than the ratio of the two medians.
 */
export function pairedRates(
  items: number,
  reference: () => number,
  body: () => number,
  runs = 5,
  warmup = 1,
): { reference: number; rate: number; ratio: number } {
  let sink = 0;
  for (let i = 0; i < warmup; i++) sink += reference() + body();
  const timed = (fn: () => number): number => {
    const t0 = process.hrtime.bigint();
    sink += fn();
    return items / (Number(process.hrtime.bigint() - t0) / 1e9);
  };
  const refs: number[] = [];
  const rates: number[] = [];
  const ratios: number[] = [];
  for (let i = 0; i < runs; i++) {
    const first = i % 2 === 0;
    const a = first ? timed(reference) : 0;
    const b = timed(body);
    const r = first ? a : timed(reference);
    refs.push(r);
    rates.push(b);
    ratios.push(b / r);
  }
  if (Number.isNaN(sink)) process.stdout.write('');
  return { reference: median(refs), rate: median(rates), ratio: median(ratios) };
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
