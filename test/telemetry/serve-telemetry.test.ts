import { describe, expect, it } from 'vitest';
import { buildStream } from '../../src/streams/index.js';
import { ServeTelemetry, ShoalMetrics, type TelemetryReading } from '../../src/telemetry/index.js';
import { frameOf } from '../pipeline/session-support.js';
import { withTelemetry } from './session-telemetry.js';

/**
 * `ServeTelemetry`: the metrics of a service's sessions (one per partition with scope `partition`) as
 * one source. Counters are sums over real learning sessions, a revoked partition's totals stay in them,
 * and the series are those of one session.
 */

/** SEA (Street & Kim 2001, PUBLISHED.md) with an abrupt change, so members drift and get replaced. */
const sea = (seed: number) => buildStream({ generator: 'sea', concepts: '9.5,7', every: 5_000, seed });

/** The series of an exposition (sample lines with their labels, without values). */
function seriesOf(body: string): string[] {
  return body
    .split('\n')
    .filter((l) => l !== '' && !l.startsWith('#'))
    .map((l) => l.slice(0, l.lastIndexOf(' ')))
    .sort();
}

describe('ServeTelemetry', () => {
  it('sums the sessions, keeps a dropped session in its counters, and has the series of one session', async () => {
    const a = withTelemetry({ seed: 3 });
    const b = withTelemetry({ seed: 3 });
    const ga = sea(1);
    const gb = sea(2);
    for (let i = 0; i < 15; i++) a.session.score(frameOf(ga, 1_000), ga.classes);
    for (let i = 0; i < 6; i++) b.session.score(frameOf(gb, 1_000), gb.classes);

    const combined = new ServeTelemetry();
    combined.add('legs/0', a.telemetry);
    combined.add('legs/1', b.telemetry);
    combined.deadLettered('undecodable');
    combined.deadLettered('no-such-code');
    combined.setLag('legs', 0, 12);
    combined.setLag('legs', 1, 5);
    combined.setLag('legs', 1, 0);

    const ra = a.telemetry.read();
    const rb = b.telemetry.read();
    const both = combined.read();
    expect(both.scored).toBe(21_000);
    expect(both.trained).toBe(ra.trained + rb.trained);
    expect(both.replacements.promoted + both.replacements.fresh).toBe(
      ra.replacements.promoted + ra.replacements.fresh + rb.replacements.promoted + rb.replacements.fresh,
    );
    const signals = (r: TelemetryReading) => {
      let n = 0;
      for (let seat = 0; seat < 10; seat++) {
        n += r.signalCount(seat, 'warning', 'watched') + r.signalCount(seat, 'drift', 'drift');
      }
      return n;
    };
    expect(signals(ra)).toBeGreaterThan(0);
    expect(signals(both)).toBe(signals(ra) + signals(rb));
    expect(both.accuracy).toBeCloseTo((ra.accuracy! + rb.accuracy!) / 2, 12);
    expect(both.deadLetters.undecodable).toBe(1);
    expect(both.deadLetters.other).toBe(1);
    expect(both.lag).toEqual([
      { topic: 'legs', partition: 0, lag: 12 },
      { topic: 'legs', partition: 1, lag: 0 },
    ]);

    const one = await new ShoalMetrics(a.telemetry, { version: 't' }).scrape(false);
    const metrics = new ShoalMetrics(combined, { version: 't' });
    const before = await metrics.scrape(false);
    expect(seriesOf(before.body).filter((s) => !s.startsWith('shoal_consumer_lag'))).toEqual(
      seriesOf(one.body),
    );

    // Partition 1 is revoked: its session goes, its totals stay, the lag of its partition goes.
    combined.drop('legs/1');
    combined.keepLag(['legs/0']);
    const after = combined.read();
    expect(after.scored).toBe(both.scored);
    expect(after.trained).toBe(both.trained);
    expect(after.labels).toEqual(both.labels);
    expect(signals(after)).toBe(signals(both));
    expect(after.accuracy).toBe(ra.accuracy);
    expect(after.lag).toEqual([{ topic: 'legs', partition: 0, lag: 12 }]);
    a.session.score(frameOf(ga, 1_000), ga.classes);
    expect(combined.read().scored).toBe(22_000);
  });
});
