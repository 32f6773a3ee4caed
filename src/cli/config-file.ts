import { readFile } from 'node:fs/promises';
import { parse, YAMLParseError } from 'yaml';
import { ConfigError, type ConfigIssue, ShoalError } from '../core/index.js';

/**
 * Read a `shoal.yaml` into plain data. A missing file or a YAML syntax error is one message naming the
 * file and the line; what the data means is checked by `resolveConfig`.
 */
export async function readConfigFile(path: string): Promise<unknown> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new ShoalError(
      'not-found',
      `${path}: cannot read the configuration (${(e as NodeJS.ErrnoException).code ?? 'error'})`,
      { cause: e },
    );
  }
  try {
    return parse(text) ?? {};
  } catch (e) {
    if (e instanceof YAMLParseError) {
      const where = e.linePos?.[0] ? ` line ${e.linePos[0].line}, column ${e.linePos[0].col}` : '';
      throw new ShoalError('invalid-config', `${path}${where}: ${e.message.split('\n')[0]}`, { cause: e });
    }
    throw e;
  }
}

/**
 * Checks that each throw a `ConfigError`, run so that every problem of a file is reported at once
 * rather than the first alone.
 *
 * @example
 * const found = new IssueList();
 * const run = found.collect(() => resolveConfig(rest, path)); // null when it had problems
 * if (found.issues.length > 0) throw new ConfigError(path, found.issues);
 */
export class IssueList {
  readonly issues: ConfigIssue[] = [];

  /** The check's result, or null after keeping its issues. */
  collect<T>(check: () => T): T | null {
    try {
      return check();
    } catch (e) {
      if (!(e instanceof ConfigError)) throw e;
      this.issues.push(...e.issues);
      return null;
    }
  }
}
