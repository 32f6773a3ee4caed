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

/** What kind of problem a configuration issue is (machine-readable, stable). */
export type ConfigIssueCode =
  | 'unknown-setting'
  | 'wrong-type'
  | 'not-an-integer'
  | 'out-of-range'
  | 'not-one-of'
  | 'required'
  | 'conflict'
  | 'duplicate'
  | 'unknown-column';

/** One problem found in a configuration, located by its path (for example `ensemble.members`). */
export interface ConfigIssue {
  readonly path: string;
  readonly code: ConfigIssueCode;
  readonly message: string;
}

/** One issue as a line: `ensemble.members: must be an integer ≥ 1, got "ten" [wrong-type]`. */
export function issueLine(issue: ConfigIssue): string {
  return `${issue.path === '' ? '(top level)' : issue.path}: ${issue.message} [${issue.code}]`;
}

/**
 * A configuration (or a component's options) that failed validation; lists every bad field, not just
 * the first: one line when there is one issue, else a count and one indented line per issue.
 */
export class ConfigError extends ShoalError {
  readonly issues: readonly ConfigIssue[];

  constructor(
    source: string,
    issues: readonly ConfigIssue[],
    code: 'invalid-config' | 'invalid-parameter' = 'invalid-config',
  ) {
    super(
      code,
      issues.length === 1
        ? `${source}: ${issueLine(issues[0]!)}`
        : `${source}: ${issues.length} problems\n${issues.map((i) => `  ${issueLine(i)}`).join('\n')}`,
    );
    this.name = 'ConfigError';
    this.issues = issues;
  }
}
