/**
 * Shoal's error taxonomy: one base class with a machine-readable `code`, a `retriable` flag and an
 * optional `cause`. Per-record failures in the pipeline are values (dead letters), not exceptions;
 * these errors are for programming mistakes, bad parameters and bad configuration.
 */

/** Every code a `ShoalError` may carry. */
export type ShoalErrorCode =
  | 'invalid-parameter'
  | 'invalid-config'
  | 'invalid-row'
  | 'invalid-label'
  | 'invalid-weight'
  | 'invalid-snapshot'
  | 'invalid-input'
  | 'not-found'
  | 'io-failure'
  | 'worker-failure';

export interface ShoalErrorOptions {
  readonly retriable?: boolean;
  readonly cause?: unknown;
}

export class ShoalError extends Error {
  readonly code: ShoalErrorCode;
  readonly retriable: boolean;

  constructor(code: ShoalErrorCode, message: string, options: ShoalErrorOptions = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = 'ShoalError';
    this.code = code;
    this.retriable = options.retriable ?? false;
  }
}

/** One problem found in a configuration, located by its path (for example `ensemble.members`). */
export interface ConfigIssue {
  readonly path: string;
  readonly message: string;
}

/** A configuration that failed validation; lists every bad field, not just the first. */
export class ConfigError extends ShoalError {
  readonly issues: readonly ConfigIssue[];

  constructor(source: string, issues: readonly ConfigIssue[]) {
    super('invalid-config', `${source}: ${issues.map((i) => `${i.path}: ${i.message}`).join('; ')}`);
    this.name = 'ConfigError';
    this.issues = issues;
  }
}
