export { Buckets } from './buckets.js';
export { ServeTelemetry } from './combined.js';
export type { MetricsOptions } from './metrics.js';
export { ShoalMetrics } from './metrics.js';
export type { TelemetryOptions } from './server.js';
export { parseListen, TelemetryServer } from './server.js';
export type { SessionTelemetryOptions } from './session-source.js';
export { SessionTelemetry } from './session-source.js';
export type {
  DeadLetterReason,
  HistogramView,
  InputDriftCause,
  LabelOutcome,
  ReplacementCause,
  SeatReading,
  SeatState,
  SignalCause,
  SignalLevel,
  SignalReading,
  TelemetryReading,
  TelemetryShape,
  TelemetrySource,
} from './source.js';
export {
  DEAD_LETTER_REASONS,
  INPUT_DRIFT_CAUSES,
  LABEL_OUTCOMES,
  REPLACEMENT_CAUSES,
  SEAT_STATES,
  SIGNAL_CAUSES,
} from './source.js';
export type { StatusBody } from './status.js';
