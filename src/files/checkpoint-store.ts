import { mkdir, open, readdir, readFile, rename, unlink } from 'node:fs/promises';
import { join } from 'node:path';
import { decodeCheckpoint, encodeCheckpoint, type RunCheckpoint } from '../checkpoint/index.js';
import { integerAtLeast, ShoalError } from '../core/index.js';
import type { CheckpointStore, StoredCheckpoint } from '../pipeline/index.js';

/**
 * Run checkpoints as files in one directory: `checkpoint-<sequence>.shoal`, numbered in the order they
 * were written. A save writes a temporary file beside them, flushes it to disk (fsync), renames it into
 * place and flushes the directory, so a crash at any moment leaves either the old set or the new one,
 * never a half-written checkpoint under a checkpoint's name; then it deletes all but the newest `keep`.
 * Reading goes from the newest down: a file that is cut short, whose bytes changed or that has another
 * format version is refused (its name and the reason in `refused`) and the one before it is used. When
 * there are checkpoints but none is good, `latest` throws, listing each with its reason: a resume must
 * not quietly start the run afresh.
 *
 * @example
 * const store = new FileCheckpointStore('run/checkpoints', { keep: 3 });
 * await store.save(checkpoint);
 * const stored = await store.latest(); // { where, checkpoint, refused } or null for an empty directory
 */
export interface FileStoreOptions {
  /** Checkpoints kept; older ones are deleted after each save. */
  readonly keep: number;
}

const PREFIX = 'checkpoint-';
const SUFFIX = '.shoal';
const TEMPORARY = '.tmp';
const NAME = /^checkpoint-(\d{12})\.shoal$/;

export class FileCheckpointStore implements CheckpointStore {
  readonly dir: string;
  private readonly keep: number;
  private next = -1;

  constructor(dir: string, options: Partial<FileStoreOptions> = {}) {
    this.dir = dir;
    this.keep = options.keep ?? 3;
    integerAtLeast('checkpoint store', 'keep', this.keep, 1);
  }

  async save(checkpoint: RunCheckpoint): Promise<string> {
    await mkdir(this.dir, { recursive: true });
    const existing = await this.list();
    // A temporary file is what a save interrupted by a crash leaves behind: never a checkpoint.
    for (const name of await this.names()) if (name.endsWith(TEMPORARY)) await unlink(join(this.dir, name));
    if (this.next < 0) this.next = existing.length > 0 ? existing[existing.length - 1]!.sequence + 1 : 0;
    const file = join(this.dir, `${PREFIX}${String(this.next++).padStart(12, '0')}${SUFFIX}`);
    const temporary = `${file}${TEMPORARY}`;
    const handle = await open(temporary, 'w');
    try {
      await handle.writeFile(encodeCheckpoint(checkpoint));
      await handle.sync();
    } finally {
      await handle.close();
    }
    await rename(temporary, file);
    await syncDirectory(this.dir);
    const stale = [...existing.map((e) => e.file), file].slice(0, -this.keep);
    for (const old of stale) await unlink(old);
    return file;
  }

  async latest(): Promise<(StoredCheckpoint & { readonly checkpoint: RunCheckpoint }) | null> {
    const refused: string[] = [];
    const files = await this.list();
    for (let i = files.length - 1; i >= 0; i--) {
      const { file } = files[i]!;
      try {
        return { where: file, checkpoint: await readCheckpointFile(file), refused };
      } catch (e) {
        if (!(e instanceof ShoalError)) throw e;
        refused.push(e.message);
      }
    }
    if (refused.length === 0) return null;
    throw new ShoalError(
      'invalid-snapshot',
      `no usable checkpoint in ${this.dir}:\n${refused.map((r) => `  ${r}`).join('\n')}`,
    );
  }

  /** Checkpoint files in the directory, oldest first; temporary files of interrupted saves are left out. */
  private async list(): Promise<{ file: string; sequence: number }[]> {
    return (await this.names())
      .map((name) => ({ name, match: NAME.exec(name) }))
      .filter((n) => n.match !== null)
      .map((n) => ({ file: join(this.dir, n.name), sequence: Number(n.match![1]) }))
      .sort((a, b) => a.sequence - b.sequence);
  }

  private async names(): Promise<string[]> {
    try {
      return await readdir(this.dir);
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code === 'ENOENT') return [];
      throw new ShoalError('io-failure', `checkpoint directory ${this.dir}: ${(e as Error).message}`, {
        cause: e,
      });
    }
  }
}

/** Read one checkpoint file; refusals name the file and say why (see `decodeCheckpoint`). */
export async function readCheckpointFile(file: string): Promise<RunCheckpoint> {
  let bytes: Buffer;
  try {
    bytes = await readFile(file);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new ShoalError(
      code === 'ENOENT' ? 'not-found' : 'io-failure',
      `checkpoint ${file}: ${(e as Error).message}`,
      {
        cause: e,
      },
    );
  }
  return decodeCheckpoint(bytes, file);
}

/** Flush a directory's entries (the rename) to disk, where the platform allows it. */
async function syncDirectory(dir: string): Promise<void> {
  const handle = await open(dir, 'r');
  try {
    await handle.sync();
  } catch (e) {
    // Some platforms and file systems refuse fsync on a directory; the rename itself is still atomic.
    if (!['EINVAL', 'EISDIR', 'EPERM', 'EBADF'].includes((e as NodeJS.ErrnoException).code ?? '')) throw e;
  } finally {
    await handle.close();
  }
}
