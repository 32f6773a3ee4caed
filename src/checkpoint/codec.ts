import { createHash } from 'node:crypto';
import { checkSnapshot, ShoalError } from '../core/index.js';
import { CHECKPOINT_KIND, CHECKPOINT_VERSION, type RunCheckpoint } from './run-checkpoint.js';

/**
 * The bytes of a checkpoint. One header line, then the checkpoint as JSON:
 *
 *   shoal-checkpoint v1 bytes=<length of the body in bytes> sha256=<hex digest of the body>\n
 *   {"kind":"run-checkpoint","version":1,"state":{…}}
 *
 * The header is read first, so a file of another format version is refused before its body is parsed,
 * a file cut short is told apart from one whose bytes changed (SHA-256, FIPS 180-4, over the body),
 * and only a body that passes both is parsed and its envelope checked.
 */
const MAGIC = 'shoal-checkpoint';
const HEADER = /^shoal-checkpoint v(\d+) bytes=(\d+) sha256=([0-9a-f]{64})$/;
/** The header is short; a first line longer than this is not one. */
const HEADER_MAX = 160;

export function encodeCheckpoint(checkpoint: RunCheckpoint): Buffer {
  const body = Buffer.from(JSON.stringify(checkpoint), 'utf8');
  const digest = createHash('sha256').update(body).digest('hex');
  const header = `${MAGIC} v${checkpoint.version} bytes=${body.length} sha256=${digest}\n`;
  return Buffer.concat([Buffer.from(header, 'ascii'), body]);
}

/**
 * Read a checkpoint's bytes, or throw an `invalid-snapshot` error that names `name` (the file) and says
 * why: not a checkpoint, another format version, cut short, bytes changed, or an envelope that does not
 * hold a run checkpoint.
 */
export function decodeCheckpoint(bytes: Uint8Array, name: string): RunCheckpoint {
  const refuse = (why: string): never => {
    throw new ShoalError('invalid-snapshot', `checkpoint ${name}: ${why}`);
  };
  const data = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const end = data.subarray(0, HEADER_MAX).indexOf(10);
  // A file cut within the header still begins with (a part of) the magic word.
  const start = data.toString('latin1', 0, MAGIC.length);
  const magic = data.length > 0 && MAGIC.startsWith(start);
  if (end < 0) {
    return refuse(
      magic
        ? `cut short within its header (${data.length} bytes)`
        : 'not a Shoal checkpoint (no header line)',
    );
  }
  const line = data.toString('latin1', 0, end);
  const version = /^shoal-checkpoint v(\d+) /.exec(line);
  if (version === null) return refuse('not a Shoal checkpoint (its first line is not a checkpoint header)');
  if (Number(version[1]) !== CHECKPOINT_VERSION) {
    refuse(`format version ${version[1]}; this build reads version ${CHECKPOINT_VERSION}`);
  }
  const header = HEADER.exec(line);
  if (header === null) return refuse(`unreadable header: ${JSON.stringify(line)}`);
  const [, , length, digest] = header;
  const body = data.subarray(end + 1);
  const expected = Number(length);
  if (body.length < expected) refuse(`cut short: ${body.length} of ${expected} bytes after the header`);
  if (body.length > expected) refuse(`${body.length - expected} bytes more than its header announces`);
  const actual = createHash('sha256').update(body).digest('hex');
  if (actual !== digest)
    refuse(
      `checksum mismatch: the bytes changed after it was written (sha256 ${actual.slice(0, 12)}…, header says ${digest!.slice(0, 12)}…)`,
    );
  let parsed: unknown;
  try {
    parsed = JSON.parse(body.toString('utf8'));
  } catch (e) {
    return refuse(`body is not JSON (${(e as Error).message})`);
  }
  try {
    checkSnapshot(parsed, CHECKPOINT_KIND, CHECKPOINT_VERSION);
  } catch (e) {
    return refuse((e as Error).message);
  }
  const state = (parsed as RunCheckpoint).state as Partial<RunCheckpoint['state']>;
  for (const field of ['shoal', 'fingerprint', 'createdAt'] as const) {
    if (typeof state[field] !== 'string') refuse(`state.${field} must be a string`);
  }
  for (const part of ['decoder', 'session'] as const) {
    if (typeof state[part] !== 'object' || state[part] === null) refuse(`state.${part} must be an object`);
  }
  return parsed as RunCheckpoint;
}
