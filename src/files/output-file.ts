import { type FileHandle, open } from 'node:fs/promises';
import { ShoalError } from '../core/index.js';

/** Create (or truncate) a file for writing; failure is a `ShoalError` naming the path. */
export async function createFile(path: string): Promise<FileHandle> {
  try {
    return await open(path, 'w');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new ShoalError(
      code === 'ENOENT' ? 'not-found' : 'io-failure',
      `${path}: cannot create (${code ?? String(e)})`,
      {
        cause: e,
      },
    );
  }
}
