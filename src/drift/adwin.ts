import {
  checkSnapshot,
  decodeF64,
  decodeI32,
  defaultsOf,
  encodeF64,
  encodeI32,
  type OptionsOf,
  type OptionTable,
  requireAbove,
  resolveOptions,
  ShoalError,
} from '../core/index.js';
import {
  checkUnitValue,
  type DetectorSnapshot,
  type DriftDetector,
  type DriftLevel,
  type DriftShift,
  LEVEL_CODES,
  packScalars,
  stateField,
  unpackScalars,
} from './detector.js';

/**
 * ADWIN2 — Bifet & Gavaldà, "Learning from time-changing data with adaptive windowing", SDM 2007.
 *
 * The detector keeps a window W of the most recent values whose mean it trusts. Whenever W can be split
 * into an older part W₀ and a newer part W₁ whose means differ by at least ε_cut, the older part is
 * stale: ADWIN drops it. With m = 1/(1/n₀ + 1/n₁) (half the harmonic mean of the part sizes), n = |W|
 * and δ′ = δ/n, the paper gives two forms of the cut (§3, Theorem 3.1, and the form "used in practice"):
 *
 *   Hoeffding form  ε_cut = √((1/2m) ln(4/δ′))
 *   variance form   ε_cut = √((2/m) σ²_W ln(2/δ′)) + (2/3m) ln(2/δ′)
 *
 * and the probability of a false cut is at most δ. ADWIN2 (§4) stores W as an exponential histogram:
 * buckets of 2^i values, at most M buckets of each size; when an (M+1)-th bucket of size 2^i appears,
 * the two oldest of that size merge into one of size 2^(i+1). Memory and the cut points checked are
 * O(M log(W/M)), and only the bucket boundaries are candidate cut points. Each bucket keeps its sum and
 * its sum of squared deviations, so the window's mean and variance are exact.
 *
 * Shoal's reading:
 * - The cut is checked every `checkEvery` values (common practice, trading up to checkEvery − 1 values of delay
 *   for work); on a cut the oldest bucket is dropped and the check repeated until no cut remains, as in
 *   the paper. `drift` is answered for a change in either direction; `shift` says which way the mean
 *   moved, from the first cut found (the newer part's mean against the older part's).
 * - Warning comes from a second, larger δ (`warningDelta`): a cut that holds at `warningDelta` but not
 *   at `delta` answers `warning` and drops nothing; the level persists until the next check.
 * - Defaults: δ = 0.002 (common practice; the value PUBLISHED.md derives ε_cut for), M = 5 (the paper's
 *   experiments, from memory), warning δ = 0.01 (Gomes et al., Machine Learning 106, 2017, from memory),
 *   checkEvery 32 (common practice), the variance form (the paper's practical choice).
 * - Values must lie in [0, 1], the range both bounds assume.
 *
 * @example
 * const adwin = new Adwin({ delta: 0.002 });
 * for (const error of errors) if (adwin.update(error) === 'drift') retrain();
 * adwin.estimate; // the error rate over the current window
 */
export type AdwinBound = 'variance' | 'hoeffding';

/** ADWIN's options (see `OptionTable`). */
export const ADWIN_OPTIONS = {
  delta: { type: 'number', above: 0, below: 1, default: 0.002, doc: 'δ, the confidence of a drift cut' },
  warningDelta: {
    type: 'number',
    above: 0,
    below: 1,
    default: 0.01,
    doc: 'the confidence of a warning cut, larger than delta',
  },
  checkEvery: { type: 'integer', atLeast: 1, default: 32, doc: 'values between two checks for a cut' },
  bucketsPerSize: { type: 'integer', atLeast: 1, default: 5, doc: 'M, the most buckets of one size' },
  bound: {
    type: 'choice',
    choices: ['variance', 'hoeffding'],
    default: 'variance',
    doc: 'which form of ε_cut to use',
  },
} as const satisfies OptionTable;

export type AdwinOptions = OptionsOf<typeof ADWIN_OPTIONS>;

export const ADWIN_DEFAULTS: AdwinOptions = defaultsOf(ADWIN_OPTIONS);

const KIND = 'adwin';
const VERSION = 1;
const INITIAL_LEVELS = 8;

/**
 * 2^level, the number of values in a bucket of each level, by doubling (exact). `2 ** level` with a
 * variable level compiles to a call of the C library's pow, once per value added (each value sets off
 * one merge, amortised): with the table ADWIN takes 1.3× as many values a second, and a worker of two
 * with the ADWIN lifecycle on five seats each spent about 2% of its time in pow.
 */
const BUCKET_SIZES = new Float64Array(1024);
for (let level = 0, size = 1; level < BUCKET_SIZES.length; level++, size *= 2) BUCKET_SIZES[level] = size;

/**
 * Both forms of the cut, multiplied through by n₀n₁ so that the scan needs no division: with
 * 1/m = n/(n₀n₁), ε_cut · n₀n₁ = √(A · n₀n₁) + B where, for a window of n values with variance σ²,
 *
 *   Hoeffding form  A = n ln(4n/δ) / 2,       B = 0
 *   variance form   A = 2σ² n ln(2n/δ),       B = (2/3) n ln(2n/δ)
 *
 * Writes A and B into out[at] and out[at + 1].
 */
function cutCoefficients(
  bound: AdwinBound,
  n: number,
  variance: number,
  delta: number,
  out: Float64Array,
  at: number,
): void {
  if (bound === 'hoeffding') {
    out[at] = (n * Math.log((4 * n) / delta)) / 2;
    out[at + 1] = 0;
  } else {
    const log = Math.log((2 * n) / delta);
    out[at] = 2 * variance * n * log;
    out[at + 1] = (2 / 3) * n * log;
  }
}

/** ε_cut for sub-windows of n₀ and n₁ values from the coefficients above. */
function adwinCut(bound: AdwinBound, n0: number, n1: number, variance: number, delta: number): number {
  const out = new Float64Array(2);
  cutCoefficients(bound, n0 + n1, variance, delta, out, 0);
  const p = n0 * n1;
  return (Math.sqrt(out[0]! * p) + out[1]!) / p;
}

/** ε_cut in the Hoeffding form, √((1/2m) ln(4/δ′)) with δ′ = δ/(n₀ + n₁) (Bifet & Gavaldà 2007, §3). */
export function adwinHoeffdingCut(n0: number, n1: number, delta: number): number {
  return adwinCut('hoeffding', n0, n1, 0, delta);
}

/**
 * ε_cut in the variance form, √((2/m) σ² ln(2/δ′)) + (2/3m) ln(2/δ′) with δ′ = δ/(n₀ + n₁)
 * (Bifet & Gavaldà 2007, §3).
 */
export function adwinVarianceCut(n0: number, n1: number, variance: number, delta: number): number {
  return adwinCut('variance', n0, n1, variance, delta);
}

function resolve(options: Partial<AdwinOptions>): AdwinOptions {
  const o = resolveOptions(KIND, ADWIN_OPTIONS, options);
  requireAbove(KIND, o, 'warningDelta', 'delta');
  return o;
}

export class Adwin implements DriftDetector {
  readonly kind = KIND;
  readonly options: AdwinOptions;
  /** Slots per level of the histogram: M buckets plus the one that triggers a merge. */
  private readonly capacity: number;
  /** Scratch for the cut coefficients (A, B) at δ and at the warning δ. */
  private readonly coefficients = new Float64Array(4);
  /** Levels allocated; level i holds buckets of 2^i values, in a ring of `capacity` slots. */
  private levels = INITIAL_LEVELS;
  private sums: Float64Array;
  private squares: Float64Array;
  /** Buckets held by each level, and the ring slot of each level's oldest bucket. */
  private used: Int32Array;
  private first: Int32Array;
  /** Levels in use: the oldest bucket is the oldest of level top − 1. */
  private top = 0;
  private size = 0;
  private total = 0;
  private deviations = 0;
  private tick = 0;
  private level: DriftLevel = 'stable';
  /** Set by `scan` when a boundary cuts at δ: whether the newer part's mean is above the older part's. */
  private cutRises = false;
  shift: DriftShift | null = null;
  alarmEstimate = Number.NaN;

  constructor(options: Partial<AdwinOptions> = {}) {
    this.options = resolve(options);
    this.capacity = this.options.bucketsPerSize + 1;
    this.sums = new Float64Array(this.levels * this.capacity);
    this.squares = new Float64Array(this.levels * this.capacity);
    this.used = new Int32Array(this.levels);
    this.first = new Int32Array(this.levels);
  }

  /** The window width |W|. */
  get count(): number {
    return this.size;
  }

  get width(): number {
    return this.size;
  }

  /** The mean of the window (the error rate for 0/1 errors); 0 when the window is empty. */
  get estimate(): number {
    return this.size > 0 ? this.total / this.size : 0;
  }

  get mean(): number {
    return this.estimate;
  }

  /** The population variance σ²_W of the window. */
  get variance(): number {
    return this.size > 0 ? this.deviations / this.size : 0;
  }

  /** Buckets in the exponential histogram: O(M log(W/M)). */
  get buckets(): number {
    let b = 0;
    for (let l = 0; l < this.top; l++) b += this.used[l]!;
    return b;
  }

  update(value: number): DriftLevel {
    checkUnitValue(KIND, value);
    this.insert(value);
    if (++this.tick < this.options.checkEvery) return this.level;
    this.tick = 0;
    let dropped = false;
    let found = this.scan();
    if (found === 2) this.shift = this.cutRises ? 'rise' : 'fall';
    while (found === 2) {
      this.dropOldest();
      dropped = true;
      found = this.scan();
    }
    this.level = found === 1 ? 'warning' : 'stable';
    if (!dropped) return this.level;
    this.alarmEstimate = this.estimate;
    return 'drift';
  }

  reset(): void {
    this.used.fill(0);
    this.first.fill(0);
    this.top = 0;
    this.size = 0;
    this.total = 0;
    this.deviations = 0;
    this.tick = 0;
    this.level = 'stable';
  }

  /** Add one value to the window: Welford's update of the window's deviations, then a bucket of 1. */
  private insert(value: number): void {
    const n = this.size + 1;
    const before = this.size > 0 ? this.total / this.size : 0;
    this.total += value;
    this.deviations += (value - before) * (value - this.total / n);
    this.size = n;
    this.push(0, value, 0);
    const limit = this.options.bucketsPerSize;
    for (let l = 0; this.used[l]! > limit; l++) this.mergeOldestPair(l);
  }

  private push(level: number, sum: number, squares: number): void {
    if (level === this.levels) this.grow();
    let position = this.first[level]! + this.used[level]!;
    if (position >= this.capacity) position -= this.capacity;
    const slot = level * this.capacity + position;
    this.sums[slot] = sum;
    this.squares[slot] = squares;
    this.used[level]!++;
    if (level >= this.top) this.top = level + 1;
  }

  /**
   * Merge the two oldest buckets of `level` (2^level values each) into one bucket of the next level.
   * Sums add; deviations add plus the between-bucket term n_a n_b/(n_a + n_b) (μ_a − μ_b)², which for
   * equal sizes s is (sum_a − sum_b)² / 2s (Chan, Golub & LeVeque's pairwise update).
   */
  private mergeOldestPair(level: number): void {
    const base = level * this.capacity;
    const head = this.first[level]!;
    const a = base + head;
    const b = head + 1 === this.capacity ? base : a + 1;
    const sa = this.sums[a]!;
    const sb = this.sums[b]!;
    const d = sa - sb;
    const squares = this.squares[a]! + this.squares[b]! + (d * d) / (2 * BUCKET_SIZES[level]!);
    this.first[level] = head + 2 >= this.capacity ? head + 2 - this.capacity : head + 2;
    this.used[level]! -= 2;
    this.push(level + 1, sa + sb, squares);
  }

  /** Drop the oldest bucket, removing its values from the window's sum and deviations. */
  private dropOldest(): void {
    const level = this.top - 1;
    const slot = level * this.capacity + this.first[level]!;
    const sum = this.sums[slot]!;
    const squares = this.squares[slot]!;
    const count = BUCKET_SIZES[level]!;
    this.first[level] = this.first[level]! + 1 === this.capacity ? 0 : this.first[level]! + 1;
    this.used[level]!--;
    while (this.top > 0 && this.used[this.top - 1] === 0) this.top--;
    const rest = this.size - count;
    if (rest === 0) {
      this.size = 0;
      this.total = 0;
      this.deviations = 0;
      return;
    }
    const restMean = (this.total - sum) / rest;
    const d = sum / count - restMean;
    this.deviations = Math.max(0, this.deviations - squares - ((count * rest) / this.size) * d * d);
    this.total -= sum;
    this.size = rest;
  }

  /**
   * Test every bucket boundary, oldest first, as a cut W = W₀ · W₁. Returns 2 if some boundary cuts at
   * `delta` (noting in `cutRises` which way the means differ at the first such boundary), else 1 if some
   * boundary cuts at `warningDelta`, else 0. In the multiplied-through form
   * (see `cutCoefficients`) a boundary cuts when |s₀n₁ − s₁n₀| ≥ √(A·n₀n₁) + B. The warning ε is the
   * smaller, so the drift ε is computed only where the warning one is exceeded.
   */
  private scan(): number {
    const n = this.size;
    if (n < 2) return 0;
    const { bound, delta, warningDelta } = this.options;
    const k = this.coefficients;
    const variance = this.deviations / n;
    cutCoefficients(bound, n, variance, warningDelta, k, 0);
    cutCoefficients(bound, n, variance, delta, k, 2);
    const aWarning = k[0]!;
    const bWarning = k[1]!;
    const aDrift = k[2]!;
    const bDrift = k[3]!;
    const { capacity, sums, used, first, total } = this;
    let n0 = 0;
    let s0 = 0;
    let found = 0;
    let count = BUCKET_SIZES[this.top - 1]!;
    for (let level = this.top - 1; level >= 0; level--, count *= 0.5) {
      const base = level * capacity;
      const end = base + capacity;
      let slot = base + first[level]!;
      for (let j = used[level]!; j > 0; j--) {
        n0 += count;
        s0 += sums[slot]!;
        if (++slot === end) slot = base;
        const n1 = n - n0;
        if (n1 === 0) return found;
        // s₀n₁ − s₁n₀ = n₀n₁(μ₀ − μ₁): its sign says which part has the larger mean.
        const signed = s0 * n1 - (total - s0) * n0;
        const gap = Math.abs(signed);
        const product = n0 * n1;
        if (gap >= Math.sqrt(aWarning * product) + bWarning) {
          if (gap >= Math.sqrt(aDrift * product) + bDrift) {
            this.cutRises = signed < 0;
            return 2;
          }
          found = 1;
        }
      }
    }
    return found;
  }

  private grow(): void {
    const levels = this.levels * 2;
    const sums = new Float64Array(levels * this.capacity);
    const squares = new Float64Array(levels * this.capacity);
    const used = new Int32Array(levels);
    const first = new Int32Array(levels);
    sums.set(this.sums);
    squares.set(this.squares);
    used.set(this.used);
    first.set(this.first);
    this.levels = levels;
    this.sums = sums;
    this.squares = squares;
    this.used = used;
    this.first = first;
  }

  /**
   * State: the window's scalars, then the buckets level by level, oldest first within a level
   * (`used` holds how many buckets each level has).
   */
  snapshot(): DetectorSnapshot {
    const buckets = this.buckets;
    const sums = new Float64Array(buckets);
    const squares = new Float64Array(buckets);
    let k = 0;
    for (let level = 0; level < this.top; level++) {
      for (let j = 0; j < this.used[level]!; j++) {
        const slot = level * this.capacity + ((this.first[level]! + j) % this.capacity);
        sums[k] = this.sums[slot]!;
        squares[k] = this.squares[slot]!;
        k++;
      }
    }
    return {
      kind: KIND,
      version: VERSION,
      options: { ...this.options },
      state: {
        scalars: packScalars([
          this.size,
          this.total,
          this.deviations,
          this.tick,
          LEVEL_CODES.indexOf(this.level),
        ]),
        used: encodeI32(this.used.subarray(0, this.top)),
        sums: encodeF64(sums),
        squares: encodeF64(squares),
      },
    };
  }

  static restore(snapshot: DetectorSnapshot): Adwin {
    checkSnapshot(snapshot, KIND, VERSION);
    const adwin = new Adwin(snapshot.options as Partial<AdwinOptions>);
    const state = snapshot.state;
    const [size, total, deviations, tick, level] = unpackScalars(KIND, stateField(KIND, state, 'scalars'), 5);
    const used = decodeI32(stateField(KIND, state, 'used') as string, `${KIND} state used`);
    const sums = decodeF64(stateField(KIND, state, 'sums') as string, `${KIND} state sums`);
    const squares = decodeF64(stateField(KIND, state, 'squares') as string, `${KIND} state squares`);
    let held = 0;
    let values = 0;
    for (let l = 0; l < used.length; l++) {
      const u = used[l]!;
      if (!(u >= 0 && u <= adwin.options.bucketsPerSize)) {
        throw new ShoalError('invalid-snapshot', `${KIND} state: level ${l} holds ${u} buckets`);
      }
      held += u;
      values += u * BUCKET_SIZES[l]!;
    }
    if (held !== sums.length || held !== squares.length || values !== size) {
      throw new ShoalError('invalid-snapshot', `${KIND} state: buckets do not add up to a window of ${size}`);
    }
    if (!(tick! >= 0 && tick! < adwin.options.checkEvery && LEVEL_CODES[level!] !== undefined)) {
      throw new ShoalError('invalid-snapshot', `${KIND} state: clock ${tick} or level ${level} out of range`);
    }
    while (adwin.levels < used.length) adwin.grow();
    let k = 0;
    for (let l = 0; l < used.length; l++) {
      for (let j = 0; j < used[l]!; j++) {
        adwin.push(l, sums[k]!, squares[k]!);
        k++;
      }
    }
    adwin.size = size!;
    adwin.total = total!;
    adwin.deviations = deviations!;
    adwin.tick = tick!;
    adwin.level = LEVEL_CODES[level!]!;
    return adwin;
  }
}
