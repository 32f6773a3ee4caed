import { describe, expect, it } from 'vitest';
import { createDetector, Ddm, type DetectorSpec, type DriftDetector, HddmA } from '../../src/drift/index.js';
import { abrupt, errorStream, median, sigmoidJoin } from '../support/drift-streams.js';
import { note } from '../support/note.js';

/**
 * Detection after a known change: 100 seeded streams (seeds 201 … 300) of 10,000 0/1 errors, Bernoulli
 * (0.2) before t₀ = 5,000 and Bernoulli(0.5) from t₀ on. A stream counts as detected when the detector
 * answers `drift` at some t ≥ t₀; the delay is t − t₀. Rates and median delays are printed.
 */
const T0 = 5000;
const LENGTH = 10_000;
const BEFORE = 0.2;
const AFTER = 0.5;
const STREAMS = 100;

interface Outcome {
  readonly detected: number;
  readonly delays: number[];
}

/** Run every stream; `atChange` sees the detector just before the first new-concept value. */
function detect(
  make: () => DriftDetector,
  share: (t: number) => number,
  from: number,
  atChange?: (detector: DriftDetector) => void,
): Outcome {
  const delays: number[] = [];
  for (let seed = 201; seed < 201 + STREAMS; seed++) {
    const values = errorStream(seed, LENGTH, BEFORE, AFTER, share);
    const detector = make();
    for (let t = 0; t < LENGTH; t++) {
      if (t === T0) atChange?.(detector);
      if (detector.update(values[t]!) === 'drift' && t >= from) {
        delays.push(t - T0);
        break;
      }
    }
  }
  return { detected: delays.length, delays };
}

function report(name: string, o: Outcome, bound: string): void {
  note(`${name}: detected ${o.detected}/${STREAMS}, median delay ${median(o.delays)} values (${bound})`);
}

/** The smallest k ≥ 1 at which `crosses(k)` holds, or Infinity within the stream. */
function firstK(crosses: (k: number) => boolean): number {
  for (let k = 1; k <= LENGTH - T0; k++) if (crosses(k)) return k;
  return Number.POSITIVE_INFINITY;
}

/**
 * The predicted delays of one stream along the paths 2 standard deviations above (`fast`) and below
 * (`slow`) the expected new errors: the band the actual delay should fall in.
 */
function bracket(fast: number[], slow: number[], crosses: (k: number, z: number) => boolean): void {
  fast.push(firstK((k) => crosses(k, 2)));
  slow.push(firstK((k) => crosses(k, -2)));
}

/** Check a detector's detections against the band predicted from its state at every change. */
function expectInBand(name: string, o: ReturnType<typeof detect>, fast: number[], slow: number[]): void {
  const band = [median(fast), median(slow)] as const;
  report(name, o, `derived: ≥ 95, median in [${band[0]}, ${band[1]}]`);
  expect(o.detected).toBeGreaterThanOrEqual(95);
  expect(median(o.delays)).toBeGreaterThanOrEqual(band[0]);
  expect(median(o.delays)).toBeLessThanOrEqual(band[1]);
}

/**
 * Errors among the first k new-concept values along a path z standard deviations off its expectation:
 * 0.5k + z·√(0.25k) (binomial mean and standard deviation).
 */
const newErrors = (k: number, z: number) => AFTER * k + z * Math.sqrt(AFTER * (1 - AFTER) * k);

describe('detection of an abrupt change Bernoulli(0.2) → Bernoulli(0.5) at t = 5,000', () => {
  it('ADWIN (δ = 0.002) detects in ≥ 95 of 100 streams with a median delay ≤ 250', () => {
    for (const spec of [
      { kind: 'adwin', delta: 0.002 },
      { kind: 'adwin', delta: 0.002, bound: 'hoeffding' },
    ] as const) {
      const o = detect(() => createDetector(spec), abrupt(T0), T0);
      report(JSON.stringify(spec), o, 'required: ≥ 95, ≤ 250');
      expect(o.detected).toBeGreaterThanOrEqual(95);
      expect(median(o.delays)).toBeLessThanOrEqual(250);
    }
  });

  it('Page-Hinkley meets the delay its definition gives', () => {
    // Derivation (Page 1954, δ = 0.005, λ = 50): after the change each increment x_t − x̄_t − δ has mean
    // 0.5 − x̄_t − δ, where x̄_t, the mean since the last restart, is at most (0.2·5000 + 0.5k)/(5000 + k)
    // after k new values when the statistics cover the 5,000 old ones. M_T ≤ m_{t₀}, so
    // m_T − M_T ≥ m_T − m_{t₀}: a random walk with drift μ(k) ≥ 0.5 − δ − x̄(k) that reaches λ after
    // λ/μ steps on average (Wald's identity), and the median of that first-passage time (an inverse
    // Gaussian) is below its mean. Bound: the fixed point k* = λ/μ(k*) ≈ 177. Every stream detects
    // (the walk drifts up by ≈ 0.28 per value; 5,000 values ≫ k*): rate ≥ 95.
    let k = 0;
    for (let i = 0; i < 50; i++) k = 50 / (AFTER - 0.005 - (BEFORE * T0 + AFTER * k) / (T0 + k));
    const o = detect(() => createDetector({ kind: 'page-hinkley' }), abrupt(T0), T0);
    report('page-hinkley', o, `derived: ≥ 95, median ≤ ${k.toFixed(0)}`);
    expect(o.detected).toBeGreaterThanOrEqual(95);
    expect(median(o.delays)).toBeLessThanOrEqual(k);
  });

  it('EDDM meets the delay its definition gives', () => {
    // Derivation (Baena-García et al. 2006, β = 0.90): distances between errors are geometric, with
    // mean 1/p and variance (1 − p)/p²: before the change 5 and 20, so the settled score p′ + 2s′ is
    // 5 + 2√20 ≈ 13.94 and the running maximum is at least that. A 5,000-value history holds about
    // N₁ = 1,000 errors. After e new errors (mean distance 2, variance 2) the score of the pooled
    // distances falls below 0.9 · 13.94 at e*; new errors come every 2 values, so the delay is 2e*.
    // A shorter history (EDDM restarts often, see false-alarms.test.ts) or a larger maximum only
    // shortens it, so 2e* ≈ 660 bounds the median. Every stream detects (5,000 values ≫ 2e*).
    const settled = 5 + 2 * Math.sqrt(20);
    const n1 = BEFORE * T0;
    const score = (e: number) => {
      const n = n1 + e;
      const mean = (n1 * 5 + e * 2) / n;
      const second = (n1 * (20 + 25) + e * (2 + 4)) / n;
      return mean + 2 * Math.sqrt(second - mean * mean);
    };
    const bound = 2 * firstK((e) => score(e) < 0.9 * settled);
    const o = detect(() => createDetector({ kind: 'eddm' }), abrupt(T0), T0);
    report('eddm', o, `derived: ≥ 95, median ≤ ${bound}`);
    expect(o.detected).toBeGreaterThanOrEqual(95);
    expect(median(o.delays)).toBeLessThanOrEqual(bound);
  });

  it('DDM meets the delay its definition predicts from its state at the change', () => {
    // Derivation (Gama et al. 2004): with n values and e errors at the change and the drift level
    // T = p_min + 3 s_min, DDM answers drift at the first k with p + s ≥ T, p = (e + errors(k))/(n + k),
    // s = √(p(1 − p)/(n + k)); p + s rises after the change, so p_min stays. With the new errors
    // 2 standard deviations above or below 0.5k the predicted delays k₊, k₋ bracket the actual one; the
    // median actual delay must lie between the medians of k₊ and k₋. Every stream detects: p climbs
    // towards 0.5 while T stays below 0.5 (rate ≥ 95).
    const fast: number[] = [];
    const slow: number[] = [];
    const predict = (d: DriftDetector) => {
      const ddm = d as Ddm;
      const n = ddm.count;
      const e = ddm.estimate * n;
      const level = ddm.driftThreshold;
      bracket(fast, slow, (k, z) => {
        const p = Math.min(1, Math.max(0, (e + newErrors(k, z)) / (n + k)));
        return n + k >= 30 && p + Math.sqrt((p * (1 - p)) / (n + k)) >= level;
      });
    };
    expectInBand(
      'ddm',
      detect(() => new Ddm(), abrupt(T0), T0, predict),
      fast,
      slow,
    );
  });

  it('HDDM_A meets the delay its definition predicts from its state at the change', () => {
    // Derivation (Frías-Blanco et al. 2015, α_D = 0.001): with n values of mean Z̄ and the cut (n_cut,
    // X̄_cut) at the change, HDDM_A answers drift at the first k with Z̄ₖ − X̄_cut ≥
    // √((n + k − n_cut)/(2(n + k)n_cut) · ln 1000), Z̄ₖ = (nZ̄ + errors(k))/(n + k); the cut stays once the
    // mean rises. New errors 2 standard deviations above or below 0.5k give k₊, k₋ as for DDM, and
    // every stream detects (Z̄ₖ − X̄_cut tends to a positive constant while the bound shrinks).
    const fast: number[] = [];
    const slow: number[] = [];
    const predict = (d: DriftDetector) => {
      const h = d as HddmA;
      const n = h.count;
      const total = h.estimate * n;
      const nc = h.cutCount;
      bracket(fast, slow, (k, z) => {
        const diff = (total + newErrors(k, z)) / (n + k) - h.cutMean;
        return nc > 0 && diff >= Math.sqrt(((n + k - nc) / (2 * (n + k) * nc)) * Math.log(1000));
      });
    };
    expectInBand(
      'hddm-a',
      detect(() => new HddmA(), abrupt(T0), T0, predict),
      fast,
      slow,
    );
  });
});

describe('detection of a gradual change (sigmoid join, PUBLISHED.md, centre 5,000, width 1,000)', () => {
  it('ADWIN detects within 2,000 values of the centre in ≥ 90 of 100 streams', () => {
    // Bifet et al., KDD 2009 (PUBLISHED.md): the value at t comes from the new concept with probability
    // 1/(1 + e^(−4(t − t₀)/W)); [derived] 0.5 at t₀, 0.880797 at t₀ + W/2, 0.982014 at t₀ + W.
    const join = sigmoidJoin(T0, 1000);
    expect(join(T0)).toBe(0.5);
    expect(join(T0 + 500)).toBeCloseTo(0.880797, 6);
    expect(join(T0 + 1000)).toBeCloseTo(0.982014, 6);
    const spec: DetectorSpec = { kind: 'adwin', delta: 0.002 };
    const o = detect(() => createDetector(spec), join, T0 - 2000);
    const within = o.delays.filter((d) => d <= 2000).length;
    note(
      `adwin, sigmoid W = 1,000: ${within}/${STREAMS} within ±2,000 of the centre, median offset ${median(o.delays)}`,
    );
    expect(within).toBeGreaterThanOrEqual(90);
  });
});
