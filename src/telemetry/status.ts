import type { TelemetryReading, TelemetryShape } from './source.js';

/**
 * The body of `/status`: what an operator wants at a glance, as JSON. It is built only from the
 * session's reading and shape — never from the configuration — so no secret can reach it.
 */
export interface StatusBody {
  readonly ready: boolean;
  /** Parts not ready yet (e.g. "model", "consumer"). */
  readonly waitingFor: readonly string[];
  readonly ensemble: string | null;
  readonly events: { readonly scored: number; readonly trained: number };
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly seats: TelemetryReading['seats'];
  readonly recentSignals: TelemetryReading['recentSignals'];
  readonly pending: { readonly count: number; readonly capacity: number };
  /** Labels that came before their event, held for it now. */
  readonly early: number;
  readonly lag: TelemetryReading['lag'];
  readonly checkpointAgeSeconds: number | null;
  readonly modelBytes: number;
}

export function statusBody(
  shape: TelemetryShape | null,
  reading: TelemetryReading,
  waitingFor: readonly string[],
): StatusBody {
  return {
    ready: waitingFor.length === 0,
    waitingFor,
    ensemble: shape?.ensemble ?? null,
    events: { scored: reading.scored, trained: reading.trained },
    accuracy: reading.accuracy,
    kappa: reading.kappa,
    seats: reading.seats,
    recentSignals: reading.recentSignals,
    pending: { count: reading.pending, capacity: reading.pendingCapacity },
    early: reading.early,
    lag: reading.lag,
    checkpointAgeSeconds: shape?.checkpoints ? reading.checkpointAgeSeconds : null,
    modelBytes: reading.modelBytes,
  };
}
