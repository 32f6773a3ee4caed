import { readFile } from 'node:fs/promises';
import { parse, YAMLParseError } from 'yaml';
import { ShoalError } from '../core/index.js';

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
