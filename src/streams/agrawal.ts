import { closedUnit, nominal, numeric, Rng, type Seed } from '../core/index.js';
import { integerIn } from './checks.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';
import { noisyLabel } from './label-noise.js';

/**
 * Agrawal's loan-applicant stream — Agrawal, Imielinski & Swami, "Database mining: a performance
 * perspective", IEEE TKDE 5(6), 1993: nine attributes of a loan applicant and ten classification
 * functions. Written from memory of the paper (PUBLISHED.md marks it [memory]); the attribute ranges
 * and the ten functions below are as recalled and have not been checked against the text.
 *
 * Attributes (continuous ones uniform, so that the derived rates of PUBLISHED.md hold exactly):
 * - salary U(20 000, 150 000); commission 0 if salary ≥ 75 000, else U(10 000, 75 000);
 * - age U(20, 80); elevel uniform on {0 … 4}; car uniform on {1 … 20}; zipcode one of 9, uniform;
 * - hvalue U(0.5·k·100 000, 1.5·k·100 000) with k depending on the zipcode (here k = code + 1, 1 … 9);
 * - hyears U(1, 30); loan U(0, 500 000).
 * The label is 1 when the row is in the paper's "group A" (classes `['B', 'A']`), computed on the exact
 * values; then, with `perturbation` p > 0, each continuous value v in [lo, hi] becomes
 * v + p·(hi − lo)·(u − ½), u ~ U(0, 1), clamped to [lo, hi] (the paper's perturbation factor, from
 * memory; the clamp is ours), and `noise` flips a share of labels. A row makes the same draws whatever
 * the function, so one seed gives the same applicants under all ten.
 *
 * @example
 * const gen = agrawal({ fn: 2, perturbation: 0.05 }, 7);
 */
export interface AgrawalOptions {
  /** Which of the paper's ten classification functions labels the rows. */
  readonly fn: number;
  readonly perturbation: number;
  readonly noise: number;
}

export const AGRAWAL_DEFAULTS: AgrawalOptions = { fn: 1, perturbation: 0, noise: 0 };

/** Column of each attribute in a row. */
export const AGRAWAL_COLUMNS = {
  salary: 0,
  commission: 1,
  age: 2,
  elevel: 3,
  car: 4,
  zipcode: 5,
  hvalue: 6,
  hyears: 7,
  loan: 8,
} as const;

const {
  salary: SAL,
  commission: COM,
  age: AGE,
  elevel: EL,
  hvalue: HV,
  hyears: HY,
  loan: LOAN,
} = AGRAWAL_COLUMNS;

/** A classification function: true when the row at `o` is in group A. */
export type AgrawalRule = (a: Float64Array, o: number) => boolean;

/** Age band of the paper's functions: 0 for age < 40, 1 for 40 ≤ age < 60, 2 for age ≥ 60. */
function band(age: number): number {
  return age < 40 ? 0 : age < 60 ? 1 : 2;
}

function within(v: number, lo: number, hi: number): boolean {
  return v >= lo && v <= hi;
}

/** Salary bands of functions 2, 4, 5 and 6, by age band (in thousands: 50–100, 75–125, 25–75). */
const BAND_LO = [50_000, 75_000, 25_000];
const BAND_HI = [100_000, 125_000, 75_000];
/** Education sets of functions 3 and 4, by age band: [0, 1], [1, 3], [2, 4]. */
const EL_LO = [0, 1, 2];
const EL_HI = [1, 3, 4];

function salaryBand(b: number, v: number): boolean {
  return within(v, BAND_LO[b]!, BAND_HI[b]!);
}

function educationSet(b: number, elevel: number): boolean {
  return within(elevel, EL_LO[b]!, EL_HI[b]!);
}

/** 0.67 × (salary + commission), the disposable-income base of functions 7–10. */
function income(a: Float64Array, o: number): number {
  return 0.67 * (a[o + SAL]! + a[o + COM]!);
}

/**
 * The ten functions, index = function − 1 (from memory):
 * 1. age < 40 ∨ age ≥ 60.
 * 2. the salary band of the age band (young 50K–100K, middle 75K–125K, old 25K–75K).
 * 3. the education set of the age band (young elevel 0–1, middle 1–3, old 2–4).
 * 4. young: elevel 0–1 ? salary 25K–75K : 50K–100K; middle: elevel 1–3 ? 50K–100K : 75K–125K;
 *    old: elevel 2–4 ? 50K–100K : 25K–75K.
 * 5. young: salary 50K–100K ? loan 100K–300K : 200K–400K; middle: salary 75K–125K ? loan 200K–400K :
 *    300K–500K; old: salary 25K–75K ? loan 300K–500K : 100K–300K.
 * 6. as 2 with salary + commission in place of salary.
 * 7. 0.67(salary + commission) − 0.2 loan − 20K > 0.
 * 8. 0.67(salary + commission) − 5000 elevel − 20K > 0.
 * 9. 0.67(salary + commission) − 5000 elevel − 0.2 loan − 10K > 0.
 * 10. with equity = 0.1 hvalue (hyears − 20) when hyears ≥ 20, else 0:
 *    0.67(salary + commission) − 5000 elevel + 0.2 equity − 10K > 0.
 */
export const AGRAWAL_RULES: readonly AgrawalRule[] = [
  (a, o) => band(a[o + AGE]!) !== 1,
  (a, o) => salaryBand(band(a[o + AGE]!), a[o + SAL]!),
  (a, o) => educationSet(band(a[o + AGE]!), a[o + EL]!),
  (a, o) => {
    const b = band(a[o + AGE]!);
    const s = a[o + SAL]!;
    if (b === 0) return educationSet(0, a[o + EL]!) ? within(s, 25_000, 75_000) : within(s, 50_000, 100_000);
    if (b === 1) return educationSet(1, a[o + EL]!) ? within(s, 50_000, 100_000) : within(s, 75_000, 125_000);
    return educationSet(2, a[o + EL]!) ? within(s, 50_000, 100_000) : within(s, 25_000, 75_000);
  },
  (a, o) => {
    const b = band(a[o + AGE]!);
    const l = a[o + LOAN]!;
    const inBand = salaryBand(b, a[o + SAL]!);
    if (b === 0) return inBand ? within(l, 100_000, 300_000) : within(l, 200_000, 400_000);
    if (b === 1) return inBand ? within(l, 200_000, 400_000) : within(l, 300_000, 500_000);
    return inBand ? within(l, 300_000, 500_000) : within(l, 100_000, 300_000);
  },
  (a, o) => salaryBand(band(a[o + AGE]!), a[o + SAL]! + a[o + COM]!),
  (a, o) => income(a, o) - 0.2 * a[o + LOAN]! - 20_000 > 0,
  (a, o) => income(a, o) - 5000 * a[o + EL]! - 20_000 > 0,
  (a, o) => income(a, o) - 5000 * a[o + EL]! - 0.2 * a[o + LOAN]! - 10_000 > 0,
  (a, o) => {
    const years = a[o + HY]!;
    const equity = years >= 20 ? 0.1 * a[o + HV]! * (years - 20) : 0;
    return income(a, o) - 5000 * a[o + EL]! + 0.2 * equity - 10_000 > 0;
  },
];

const SCHEMA = {
  features: [
    numeric('salary'),
    numeric('commission'),
    numeric('age'),
    nominal('elevel', ['0', '1', '2', '3', '4']),
    nominal(
      'car',
      Array.from({ length: 20 }, (_, i) => String(i + 1)),
    ),
    nominal(
      'zipcode',
      Array.from({ length: 9 }, (_, i) => `zip${i + 1}`),
    ),
    numeric('hvalue'),
    numeric('hyears'),
    numeric('loan'),
  ],
};

export function agrawal(options: Partial<AgrawalOptions> = {}, seed: Seed = 1): StreamGenerator {
  const { fn, perturbation, noise } = { ...AGRAWAL_DEFAULTS, ...options };
  integerIn('agrawal', 'fn', fn, 1, 10);
  closedUnit('agrawal', 'perturbation', perturbation);
  closedUnit('agrawal', 'noise', noise);
  const rule = AGRAWAL_RULES[fn - 1]!;
  let rng = new Rng(seed);
  const perturb = (row: Float64Array, i: number, lo: number, hi: number): void => {
    const v = row[i]! + perturbation * (hi - lo) * (rng.next() - 0.5);
    row[i] = Math.min(hi, Math.max(lo, v));
  };
  return {
    name: 'agrawal',
    schema: SCHEMA,
    classes: ['B', 'A'],
    next(row, offset) {
      const salary = 20_000 + 130_000 * rng.next();
      const commissionDraw = rng.next();
      row[offset + SAL] = salary;
      row[offset + COM] = salary >= 75_000 ? 0 : 10_000 + 65_000 * commissionDraw;
      row[offset + AGE] = 20 + 60 * rng.next();
      row[offset + EL] = rng.int(5);
      row[offset + AGRAWAL_COLUMNS.car] = rng.int(20);
      const zipcode = rng.int(9);
      row[offset + AGRAWAL_COLUMNS.zipcode] = zipcode;
      const scale = (zipcode + 1) * 100_000;
      row[offset + HV] = scale * (0.5 + rng.next());
      row[offset + HY] = 1 + 29 * rng.next();
      row[offset + LOAN] = 500_000 * rng.next();
      const label = rule(row, offset) ? 1 : 0;
      if (perturbation > 0) {
        perturb(row, offset + SAL, 20_000, 150_000);
        if (row[offset + COM]! > 0) perturb(row, offset + COM, 10_000, 75_000);
        perturb(row, offset + AGE, 20, 80);
        perturb(row, offset + HV, 0.5 * scale, 1.5 * scale);
        perturb(row, offset + HY, 1, 30);
        perturb(row, offset + LOAN, 0, 500_000);
      }
      return noisyLabel(rng, noise, label, 2);
    },
    snapshot: (): GeneratorSnapshot => generatorSnapshot('agrawal', { rng: rng.state() }),
    restore(snapshot) {
      const state = generatorState(snapshot, 'agrawal');
      rng = Rng.fromState(state.rng);
    },
  };
}
