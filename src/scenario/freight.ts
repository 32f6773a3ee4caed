import {
  type ChangePoints,
  checkSnapshot,
  type FeatureSchema,
  nominal,
  numeric,
  Rng,
  type RngState,
  type Seed,
  ShoalError,
  type Snapshot,
  samplePoisson,
} from '../core/index.js';

/**
 * The demo scenario (invented from end to end; DESIGN.md, "Demo scenario"): Polar Pelican Provisions, a
 * refrigerated-freight operator that does not exist, scores each trailer leg at the arrival gate of its
 * invented sites for the risk that the load is rejected at inspection. The inspection result — the
 * label — arrives hours later in scenario time, on its own.
 *
 * How a leg is made (every draw from one seeded `Rng`, in a fixed order, so a seed gives the same legs
 * bit for bit):
 * - product class (dairy, produce, frozen, meat, seafood) and its setpoint; a carrier by its share;
 *   leg hours; ambient temperature (a base, the heat wave, noise);
 * - door openings (Poisson, the carrier's rate per hour) and minutes open; compressor duty, which rises
 *   with ambient heat and open doors and saturates;
 * - the air's excess over the setpoint as the box sensor reads it (from ambient heat once the compressor
 *   is near saturation, open doors, noise), the sensor's mean and max and the minutes above setpoint;
 *   the air's true excess is that reading less the sensor's bias, which the reefer's controller, holding
 *   the reading at the setpoint, turns into colder air (no bias before the firmware update);
 * - the inspector's core-temperature probe: the setpoint, the load's own warmth at loading (a carrier
 *   trait the sensors never see), the air's true excess soaked in over the leg, and probe noise; the
 *   load is rejected when the probe is more than the class's limit above the setpoint.
 *
 * The script, at fixed shares of the scenario's `length` (rows; `SCRIPT` below):
 * - `seafood-rule` (abrupt): the seafood limit drops from 2.5 °C to 0.5 °C above setpoint;
 * - `heat-wave` (gradual): ambient temperature rises by up to 9 °C, holds, and falls back;
 * - `firmware` (abrupt): every sensor moves to firmware thermo-ox 3.0, which reads 3–4 °C high, differently
 *   on every trailer; each controller holds its box that much colder, so the readings look as before
 *   while fewer loads are rejected — the trees' splits on the readings now overstate the risk;
 * - `new-carrier` (abrupt): Brisk Badger Logistics takes half of the legs — the cold-store pickups, whose
 *   loads leave pre-chilled, on multi-drop runs that open the doors often — and the other carriers are
 *   left with the market pickups, whose loads leave 2.5 °C warmer than theirs did: many door openings
 *   now go with accepted loads, and the old carriers' legs are rejected at readings that passed before.
 * Both invalidate what the trees learnt in dense regions of the inputs (the same readings, a different
 * outcome), so an understudy grown after the change proves better than the member (see the demo test).
 * After `length` rows the world stays as the script left it.
 */

export const OPERATOR = 'Polar Pelican Provisions (invented)';
export const SITES: readonly string[] = ['Nowhere Junction DC', 'Puddleby Cross-Dock', 'Gull Point Market'];
/** Site codes, the prefix of each leg's id. */
export const SITE_CODES: readonly string[] = ['NWJ', 'PDB', 'GPM'];
export const PRODUCT_CLASSES: readonly string[] = ['dairy', 'produce', 'frozen', 'meat', 'seafood'];
export const CARRIERS: readonly string[] = [
  'Frostbyte Haulage',
  'Slushline Freight',
  'Mooncalf Reefers',
  'Icicle & Sons Cartage',
  'Brisk Badger Logistics',
];
export const FIRMWARE: readonly string[] = ['thermo-ox 2.4', 'thermo-ox 3.0'];
export const CLASSES: readonly string[] = ['accepted', 'rejected'];

/** Column names, in row order. */
export const FREIGHT_SCHEMA: FeatureSchema = {
  features: [
    numeric('box_temp_mean'),
    numeric('box_temp_max'),
    numeric('minutes_above_setpoint'),
    numeric('door_openings'),
    numeric('door_open_minutes'),
    numeric('ambient_temp'),
    numeric('leg_hours'),
    numeric('compressor_duty'),
    numeric('setpoint'),
    nominal('product_class', PRODUCT_CLASSES),
    nominal('carrier', CARRIERS),
    nominal('sensor_firmware', FIRMWARE),
  ],
};

export type DriftName = 'seafood-rule' | 'heat-wave' | 'firmware' | 'new-carrier';

/** A scripted change: where it starts (and, when gradual, where it is full and where it is over). */
export interface ScriptedDrift {
  readonly name: DriftName;
  readonly kind: 'abrupt' | 'gradual';
  /** Share of the scenario's length at which it begins. */
  readonly at: number;
  /** Gradual only: full strength from `full`, fading from `fade` to nothing at `end`. */
  readonly full?: number;
  readonly fade?: number;
  readonly end?: number;
  readonly what: string;
}

export const SCRIPT: readonly ScriptedDrift[] = [
  {
    name: 'seafood-rule',
    kind: 'abrupt',
    at: 0.3,
    what: 'stricter seafood inspection: the limit drops from 2.5 °C to 0.5 °C above setpoint',
  },
  {
    name: 'heat-wave',
    kind: 'gradual',
    at: 0.4,
    full: 0.55,
    fade: 0.7,
    end: 0.9,
    what: 'a slow summer heat wave: ambient temperature up to 9 °C higher',
  },
  {
    name: 'firmware',
    kind: 'abrupt',
    at: 0.6,
    what: 'sensor firmware thermo-ox 3.0 on every trailer reads 3–4 °C high: the reefers hold their boxes that much colder',
  },
  {
    name: 'new-carrier',
    kind: 'abrupt',
    at: 0.8,
    what: 'a new carrier, Brisk Badger Logistics, takes the cold-store pickups (half of the legs); the others are left with the warm market pickups',
  },
];

/** The rows (0-based) at which each scripted drift begins in a scenario of `length` rows. */
export function driftRows(length: number): ReadonlyMap<DriftName, number> {
  return new Map(SCRIPT.map((d) => [d.name, Math.round(d.at * length)]));
}

/**
 * The script's abrupt changes as the stream's true change points (journaled in the run record, drawn
 * by the report): each concept is named after the drift that began it, the first `start`. The heat
 * wave, gradual, is not one of them.
 */
export function scriptedChanges(length: number): ChangePoints {
  const at = driftRows(length);
  const abrupt = SCRIPT.filter((d) => d.kind === 'abrupt');
  return {
    rows: abrupt.map((d) => at.get(d.name)!),
    concepts: ['start', ...abrupt.map((d) => d.name)],
    width: 0,
  };
}

export interface FreightOptions {
  /** Rows over which the script plays out (default 20,000). */
  readonly length: number;
  /** Mean scenario seconds between two legs reaching a gate (default 120). */
  readonly gapSeconds: number;
  /** Inspection results arrive this many hours after the leg, uniformly between the two (default 2–8). */
  readonly labelHours: readonly [number, number];
  /** Scenario start, ms since 1970 (default 2026-06-01T00:00:00Z). */
  readonly start: number;
}

export const FREIGHT_DEFAULTS: FreightOptions = {
  length: 20_000,
  gapSeconds: 120,
  labelHours: [2, 8],
  start: Date.UTC(2026, 5, 1),
};

const SHARES_PRODUCT = [0.2, 0.15, 0.15, 0.15, 0.35];
const SETPOINT = [3, 5, -20, 1, 0];
/** Rejection limit, °C of core temperature above the setpoint, per class. */
const LIMIT = [2.5, 3, 4, 2, 2.5];
const SEAFOOD_STRICT = 0.5;
const SHARES_CARRIER = [0.35, 0.3, 0.2, 0.15];
const NEW_CARRIER_SHARE = 0.5;
/** Door openings per hour on the road, per carrier. */
const DOOR_RATE = [0.15, 0.25, 0.35, 0.2, 0.6];
/** How warm the load is when it leaves (°C above setpoint): unseen by the sensors. */
const LOAD_WARMTH = [0.8, 1.1, 1.5, 1.0, -2];
/** Extra warmth of the other carriers' loads once the new carrier has taken the cold-store pickups. */
const MARKET_WARMTH = 2.5;
const HEAT_PEAK = 9;
/** thermo-ox 3.0 reads high by FIRMWARE_BIAS to FIRMWARE_BIAS + 1 °C, differently on every trailer. */
const FIRMWARE_BIAS = 3;
const SEAFOOD = 4;
const NEW_CARRIER = 4;

/** What happened on the last leg drawn, beside its row and label. */
export interface LegFacts {
  /** Row number (0-based) of the leg in the scenario. */
  index: number;
  /** The leg's id: site code and number, e.g. `PDB-000042`. */
  id: string;
  /** Scenario time (ms since 1970) at which the leg reached the gate, and when its inspection result is known. */
  time: number;
  labelTime: number;
}

interface FreightState {
  readonly rng: RngState;
  readonly index: number;
  readonly time: number;
}

export type FreightSnapshot = Snapshot<FreightState>;

const KIND = 'freight-scenario';
const VERSION = 1;

/**
 * The scenario as a seeded generator: `next(row, offset)` writes the next leg's features and returns
 * its label (0 accepted, 1 rejected); `leg` tells its id, gate time and when its label becomes known.
 *
 * @example
 * const legs = new FreightScenario(7);
 * const row = new Float64Array(FREIGHT_SCHEMA.features.length);
 * const label = legs.next(row, 0); // legs.leg.id, legs.leg.labelTime
 */
export class FreightScenario {
  readonly name = 'freight';
  readonly schema = FREIGHT_SCHEMA;
  readonly classes = CLASSES;
  readonly options: FreightOptions;
  readonly leg: LegFacts;
  private rng: Rng;
  private readonly at: ReadonlyMap<DriftName, number>;
  private readonly heat: ScriptedDrift;

  constructor(seed: Seed, options: Partial<FreightOptions> = {}) {
    this.options = { ...FREIGHT_DEFAULTS, ...options };
    const { length, gapSeconds, labelHours } = this.options;
    if (!(Number.isInteger(length) && length >= 100)) {
      throw new ShoalError(
        'invalid-parameter',
        `freight scenario: length must be a whole number ≥ 100, got ${length}`,
      );
    }
    if (!(gapSeconds > 0)) {
      throw new ShoalError(
        'invalid-parameter',
        `freight scenario: gapSeconds must be > 0, got ${gapSeconds}`,
      );
    }
    if (!(labelHours[0] >= 0 && labelHours[1] >= labelHours[0])) {
      throw new ShoalError(
        'invalid-parameter',
        `freight scenario: labelHours must be [low, high] with 0 ≤ low ≤ high, got [${labelHours.join(', ')}]`,
      );
    }
    this.rng = new Rng(seed);
    this.at = driftRows(length);
    this.heat = SCRIPT.find((d) => d.name === 'heat-wave')!;
    this.leg = { index: -1, id: '', time: this.options.start, labelTime: this.options.start };
  }

  /** Whether a drift has begun by row `index`. */
  begun(name: DriftName, index: number): boolean {
    return index >= this.at.get(name)!;
  }

  /** The heat wave's extra ambient temperature (°C) at row `index`. */
  heatAt(index: number): number {
    const { at, full, fade, end } = this.heat;
    const x = index / this.options.length;
    if (x <= at || x >= end!) return 0;
    if (x < full!) return (HEAT_PEAK * (x - at)) / (full! - at);
    if (x <= fade!) return HEAT_PEAK;
    return (HEAT_PEAK * (end! - x)) / (end! - fade!);
  }

  next(row: Float64Array, offset: number): number {
    const rng = this.rng;
    const leg = this.leg;
    const index = ++leg.index;
    leg.time += -Math.log(1 - rng.next()) * this.options.gapSeconds * 1000;
    const [low, high] = this.options.labelHours;
    leg.labelTime = leg.time + (low + (high - low) * rng.next()) * 3_600_000;
    const site = rng.int(SITE_CODES.length);
    leg.id = `${SITE_CODES[site]}-${String(index).padStart(6, '0')}`;

    const product = pick(rng, SHARES_PRODUCT);
    const newCarrier = this.begun('new-carrier', index);
    const carrier = newCarrier && rng.next() < NEW_CARRIER_SHARE ? NEW_CARRIER : pick(rng, SHARES_CARRIER);
    const setpoint = SETPOINT[product]!;
    const hours = Math.min(36, 1 + -Math.log(1 - rng.next()) * 8);
    const ambient = 17 + this.heatAt(index) + 4 * rng.normal();
    const openings = samplePoisson(rng, hours * DOOR_RATE[carrier]!);
    let openMinutes = 0;
    for (let k = 0; k < openings; k++) openMinutes += -Math.log(1 - rng.next()) * 4;
    const frozen = setpoint < -10 ? 0.15 : 0;
    const demand = 0.35 + 0.025 * (ambient - 15) + 0.01 * openMinutes + frozen + 0.06 * rng.normal();
    const duty = Math.min(1, Math.max(0.05, demand));
    // Air excess over the setpoint as the sensor reads it: heat the compressor could not take away once
    // saturated, doors, noise.
    const excess =
      Math.max(0, demand - 0.9) * 6 +
      0.06 * Math.max(0, ambient - 15) +
      0.08 * openMinutes +
      0.9 * Math.abs(rng.normal());
    // The new firmware's calibration bug: readings 3–4 °C high, differently on every trailer. The
    // controller holds the reading at the setpoint, so the air is that much colder and reads as before.
    const bias = this.begun('firmware', index) ? FIRMWARE_BIAS + rng.next() : 0;
    const air = excess - bias;
    const mean = setpoint + excess;
    const max = mean + 1 + 0.4 * openings + 1.2 * Math.abs(rng.normal());
    const shareAbove = Math.min(1, Math.max(0, excess / 3 + 0.08 * rng.normal()));

    row[offset] = mean;
    row[offset + 1] = max;
    row[offset + 2] = Math.round(hours * 60 * shareAbove);
    row[offset + 3] = openings;
    row[offset + 4] = openMinutes;
    row[offset + 5] = ambient;
    row[offset + 6] = hours;
    row[offset + 7] = duty;
    row[offset + 8] = setpoint;
    row[offset + 9] = product;
    row[offset + 10] = carrier;
    row[offset + 11] = bias === 0 ? 0 : 1;

    // The inspector's probe: the load's own warmth, the air's true excess soaked in over the leg, probe noise.
    const soak = 1 - Math.exp(-hours / 6);
    const warmth = LOAD_WARMTH[carrier]! + (newCarrier && carrier !== NEW_CARRIER ? MARKET_WARMTH : 0);
    const core = warmth + air * (0.4 + 0.6 * soak) + 0.4 * rng.normal();
    const limit = product === SEAFOOD && this.begun('seafood-rule', index) ? SEAFOOD_STRICT : LIMIT[product]!;
    return core > limit ? 1 : 0;
  }

  snapshot(): FreightSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      state: { rng: this.rng.state(), index: this.leg.index, time: this.leg.time },
    };
  }

  /** Go on from a snapshot taken from a scenario built with the same options. */
  restore(snapshot: FreightSnapshot): void {
    checkSnapshot(snapshot, KIND, VERSION);
    this.rng = Rng.fromState(snapshot.state.rng);
    this.leg.index = snapshot.state.index;
    this.leg.time = snapshot.state.time;
  }
}

/** An index drawn by the given shares (which sum to 1). */
function pick(rng: Rng, shares: readonly number[]): number {
  let u = rng.next();
  for (let i = 0; i < shares.length - 1; i++) {
    u -= shares[i]!;
    if (u < 0) return i;
  }
  return shares.length - 1;
}
