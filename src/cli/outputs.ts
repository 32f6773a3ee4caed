import { type FileHandle, open, realpath, rename, stat, unlink } from 'node:fs/promises';
import { basename, dirname, join, resolve } from 'node:path';
import { ShoalError } from '../core/index.js';

/**
 * The files a command reads and writes, named by the option that gave them (`FILE`, `--journal`, …).
 * Before a command reads anything it refuses any output that is one of its inputs or another output
 * (after resolving `..`, symbolic links and hard links), then opens every output as a temporary file
 * beside its final path, so that a path that cannot be written is reported before the run starts and
 * a failed run leaves no half-written file behind; a finished file is renamed into place.
 */
export interface NamedPath {
  /** How the user named it: `FILE`, `--journal`, `--out`, … */
  readonly flag: string;
  readonly path: string;
}

/** Where a path leads: the real path of an existing file (or of its folder), and its inode. */
interface Place {
  readonly real: string;
  readonly inode: string | null;
}

async function place(path: string): Promise<Place> {
  const absolute = resolve(path);
  try {
    const info = await stat(absolute);
    return { real: await realpath(absolute), inode: `${info.dev}:${info.ino}` };
  } catch {
    try {
      return { real: join(await realpath(dirname(absolute)), basename(absolute)), inode: null };
    } catch {
      return { real: absolute, inode: null };
    }
  }
}

function same(a: Place, b: Place): boolean {
  return a.real === b.real || (a.inode !== null && a.inode === b.inode);
}

/**
 * Refuse outputs that would overwrite an input or each other. Throws one `ShoalError` listing every
 * collision; touches no file.
 */
export async function refuseCollisions(
  inputs: readonly NamedPath[],
  outputs: readonly NamedPath[],
): Promise<void> {
  const inPlaces = await Promise.all(inputs.map((p) => place(p.path)));
  const outPlaces = await Promise.all(outputs.map((p) => place(p.path)));
  const problems: string[] = [];
  outputs.forEach((out, i) => {
    inputs.forEach((input, k) => {
      if (same(outPlaces[i]!, inPlaces[k]!))
        problems.push(`${out.flag} ${out.path} is the input ${input.flag} (${input.path})`);
    });
    for (let k = 0; k < i; k++) {
      if (same(outPlaces[i]!, outPlaces[k]!))
        problems.push(`${out.flag} ${out.path} is also ${outputs[k]!.flag} (${outputs[k]!.path})`);
    }
  });
  if (problems.length > 0) {
    throw new ShoalError(
      'invalid-parameter',
      `${problems.join('; ')}: refusing to overwrite it; choose another path`,
    );
  }
}

/** An output being written to a temporary file beside its final path. */
export class OutputFile {
  readonly flag: string;
  readonly path: string;
  private readonly temp: string;
  private readonly handle: FileHandle;
  private readonly pending: string[] = [];

  private constructor(named: NamedPath, temp: string, handle: FileHandle) {
    this.flag = named.flag;
    this.path = named.path;
    this.temp = temp;
    this.handle = handle;
  }

  /** Open the temporary file now, so that a path that cannot be written is refused before the run. */
  static async open(named: NamedPath): Promise<OutputFile> {
    const temp = join(dirname(named.path), `.${basename(named.path)}.${process.pid}.partial`);
    try {
      const existing = await stat(named.path).catch(() => null);
      if (existing?.isDirectory()) throw Object.assign(new Error('is a folder'), { code: 'EISDIR' });
      return new OutputFile(named, temp, await open(temp, 'wx'));
    } catch (e) {
      throw writeError(named, e);
    }
  }

  /** The temporary file, for a writer that opens files by path (it is renamed on `commit`). */
  get partialPath(): string {
    return this.temp;
  }

  /** Append text (buffered; `drain` hands it to the file). */
  write(text: string): void {
    this.pending.push(text);
  }

  /** Write what is buffered (called once per batch, so that memory stays bounded). */
  async drain(): Promise<void> {
    if (this.pending.length === 0) return;
    const text = this.pending.join('');
    this.pending.length = 0;
    try {
      await this.handle.writeFile(text);
    } catch (e) {
      throw writeError(this, e);
    }
  }

  /** Finish writing and move the file to its final path. */
  async commit(): Promise<void> {
    try {
      await this.drain();
      await this.handle.close();
      await rename(this.temp, this.path);
    } catch (e) {
      await this.discard();
      throw e instanceof ShoalError ? e : writeError(this, e);
    }
  }

  /** Drop what was written (the final path is left as it was). */
  async discard(): Promise<void> {
    this.pending.length = 0;
    await this.handle.close().catch(() => undefined);
    await unlink(this.temp).catch(() => undefined);
  }
}

function writeError(named: NamedPath, e: unknown): ShoalError {
  const code = (e as NodeJS.ErrnoException).code;
  const why =
    code === 'EACCES' || code === 'EPERM'
      ? 'permission denied'
      : code === 'ENOENT'
        ? 'its folder does not exist'
        : code === 'ENOSPC'
          ? 'no space left on the device'
          : code === 'EISDIR'
            ? 'it is a folder'
            : (code ?? (e as Error).message);
  return new ShoalError('io-failure', `${named.flag} ${named.path}: cannot write (${why})`, { cause: e });
}

/** Open every output (after refusing collisions); on any failure the ones opened are discarded. */
export async function openOutputs(
  inputs: readonly NamedPath[],
  outputs: readonly NamedPath[],
): Promise<OutputFile[]> {
  await refuseCollisions(inputs, outputs);
  const opened: OutputFile[] = [];
  try {
    for (const named of outputs) opened.push(await OutputFile.open(named));
  } catch (e) {
    await Promise.all(opened.map((o) => o.discard()));
    throw e;
  }
  return opened;
}
