import { type FreightScenario, SCRIPT } from '../scenario/index.js';
import type { LabelQueue } from './label-queue.js';

/**
 * The next legs of the freight scenario, a batch at a time, as `shoal demo` and `shoal demo-stream`
 * take them: each leg's features into a row-major buffer, its id into `ids`, its inspection result into
 * the queue until its scenario time comes, and each scripted change announced once, at the first leg
 * it touches.
 *
 * @example
 * const legs = new LegBatches(scenario, (index, what) => print(`leg ${index}: ${what}`));
 * legs.fill(200, values, ids, inspections);
 */
export class LegBatches {
  private readonly scenario: FreightScenario;
  private readonly width: number;
  private readonly announce: (index: number, what: string) => void;
  private readonly pending = SCRIPT.map((d) => ({ name: d.name, what: d.what, shown: false }));

  constructor(scenario: FreightScenario, announce: (index: number, what: string) => void) {
    this.scenario = scenario;
    this.width = scenario.schema.features.length;
    this.announce = announce;
  }

  /** Draw `rows` legs; `positions`, when given, receives each leg's row number in the scenario. */
  fill(
    rows: number,
    values: Float64Array,
    ids: string[],
    inspections: LabelQueue,
    positions: Int32Array | null = null,
  ): void {
    const scenario = this.scenario;
    for (let r = 0; r < rows; r++) {
      const label = scenario.next(values, r * this.width);
      const leg = scenario.leg;
      for (const d of this.pending) {
        if (!d.shown && scenario.begun(d.name, leg.index)) {
          d.shown = true;
          this.announce(leg.index, d.what);
        }
      }
      ids[r] = leg.id;
      if (positions !== null) positions[r] = leg.index;
      inspections.push(leg.labelTime, leg.id, label);
    }
  }
}
