import { type FeatureSchema, nominal, numeric, Rng } from '../../src/core/index.js';
import {
  createDetector,
  createInputMonitor,
  DETECTOR_KINDS,
  type DetectorSpec,
} from '../../src/drift/index.js';
import { type BenchFn, type BenchRow, floorRate, machine, medianRate } from './harness.js';

/**
 * Drift detectors: values per second for each kind on a stationary Bernoulli(0.2) error stream (the
 * worst case for ADWIN, whose window — and bucket count — then keeps growing), beside the bare-loop
 * floor over the same values. Target: ADWIN ≥ 2 million values/s on one core. Then the input-drift
 * monitor in rows per second on a schema shaped like the demo's (10 numeric, 3 nominal features).
 */
export const bench: BenchFn = ({ quick }) => {
  const count = quick ? 200_000 : 2_000_000;
  const rng = new Rng('bench-drift');
  const values = new Float64Array(count);
  for (let i = 0; i < count; i++) values[i] = rng.next() < 0.2 ? 1 : 0;
  const floor = floorRate(values, count);

  const rows: BenchRow[] = [{ name: 'floor (bare loop)', rate: floor, unit: 'values/s', ofFloor: 1 }];
  const json: Record<string, unknown> = {
    machine: machine(),
    values: count,
    floor: { valuesPerSecond: floor },
  };
  for (const kind of DETECTOR_KINDS) {
    const spec = { kind } as DetectorSpec;
    let alarms = 0;
    const rate = medianRate(count, () => {
      const detector = createDetector(spec);
      for (let i = 0; i < count; i++) if (detector.update(values[i]!) === 'drift') alarms++;
      return detector.estimate;
    });
    rows.push({
      name: kind,
      rate,
      unit: 'values/s',
      ofFloor: rate / floor,
      note: `${alarms} alarms over all runs`,
    });
    json[kind] = { valuesPerSecond: rate, ofFloor: rate / floor };
  }

  const schema: FeatureSchema = {
    features: [
      ...Array.from({ length: 10 }, (_, i) => numeric(`x${i}`)),
      nominal('product', 5),
      nominal('carrier', 12),
      nominal('firmware', 4),
    ],
  };
  const width = schema.features.length;
  const frameRows = quick ? 20_000 : 200_000;
  const frame = new Float64Array(frameRows * width);
  for (let r = 0; r < frameRows; r++) {
    for (let j = 0; j < width; j++) {
      const f = schema.features[j]!;
      frame[r * width + j] = f.kind === 'nominal' ? rng.int(f.values) : rng.normal();
    }
  }
  const frameFloor = floorRate(frame, frameRows);
  const monitorRate = medianRate(frameRows, () => {
    const monitor = createInputMonitor(schema);
    let flagged = 0;
    for (let r = 0; r < frameRows; r++) flagged += monitor.update(frame, r * width);
    return flagged;
  });
  rows.push({ name: 'floor (bare loop, 13-feature rows)', rate: frameFloor, unit: 'rows/s', ofFloor: 1 });
  rows.push({ name: 'input-monitor', rate: monitorRate, unit: 'rows/s', ofFloor: monitorRate / frameFloor });
  json['input-monitor'] = { rowsPerSecond: monitorRate, ofFloor: monitorRate / frameFloor, features: width };

  return { title: 'Drift detectors', rows, json };
};
