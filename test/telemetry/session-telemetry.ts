import { LearningSession, resolveConfig } from '../../src/pipeline/index.js';
import { SessionTelemetry } from '../../src/telemetry/index.js';
import { manualClock } from '../pipeline/session-support.js';

/** A session with its telemetry, wired as `replay --metrics` and `serve` wire them. */
export function withTelemetry(raw: unknown = {}): { session: LearningSession; telemetry: SessionTelemetry } {
  let telemetry: SessionTelemetry | null = null;
  const session = new LearningSession({
    config: resolveConfig(raw, 'test'),
    source: 'test stream',
    journal: { write: (r) => telemetry?.record(r), flush: async () => {} },
    clock: manualClock(),
    version: '0.0.0-test',
  });
  telemetry = SessionTelemetry.of(session, { checkpoints: false, wall: () => 0 });
  return { session, telemetry };
}
