import Module, { createRequire } from 'node:module';
import type * as Kafkajs from 'kafkajs';
import { crc32c } from './crc32c.js';

const require = createRequire(import.meta.url);

/**
 * kafkajs's module that checksums each record batch it writes (kafkajs 2.2.4, pinned), by the path its
 * record-batch encoder requires it under.
 */
const KAFKAJS_CRC32C = 'kafkajs/src/protocol/recordBatch/crc32C/index.js';

let loaded: typeof Kafkajs | null = null;

/**
 * kafkajs, for every module of Shoal that uses it (types may be imported from `kafkajs` directly). On
 * the first call, before kafkajs is loaded, `crc32c` takes the place of kafkajs's own CRC-32C module in
 * Node's module cache, so the record batches kafkajs produces are checksummed eight bytes per step
 * (the bytes are the same). When something in the process loaded kafkajs earlier (a test harness that
 * imports it), or a kafkajs other than the pinned one has no module at that path, kafkajs keeps its own:
 * the same checksums, slower.
 *
 * @example
 * const { Kafka } = kafkajsModule();
 */
export function kafkajsModule(): typeof Kafkajs {
  if (loaded !== null) return loaded;
  const path = ownCrcSlot();
  if (path !== null && require.cache[path] === undefined) {
    const own = new Module(path);
    own.filename = path;
    own.exports = crc32c;
    own.loaded = true;
    require.cache[path] = own;
  }
  loaded = require('kafkajs') as typeof Kafkajs;
  return loaded;
}

/** Where kafkajs keeps its CRC-32C module, or null when this kafkajs has none there. */
function ownCrcSlot(): string | null {
  try {
    return require.resolve(KAFKAJS_CRC32C);
  } catch {
    return null;
  }
}
