import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { EVENTS_TOPIC, restoreService } from './restore-setup.js';

/**
 * The restore benchmark's fresh process: take up the session from the newest checkpoint in the folder
 * (`argv[2]`) exactly as `shoal serve` does on start (read, check, decode, rebuild the session), then
 * handle the next 1,000-row events message (offset `argv[3]`); prints the times as JSON. A process of its
 * own, so the compiler is as cold as a restarted service's.
 */
const dir = process.argv[2]!;
const offset = process.argv[3]!;
const value = await readFile(join(dir, 'next-message.arrow'));
const began = performance.now();
const { models, checkpoints } = restoreService(dir);
const taken = await checkpoints.load(models, 'global');
if (taken === null) throw new Error(`no checkpoint in ${dir}`);
const restored = performance.now();
const handled = await models.handle({
  topic: EVENTS_TOPIC,
  partition: 0,
  messages: [{ offset, timestamp: String(Date.now()), value }],
  lag: 0,
});
const scored = performance.now();
process.stdout.write(
  JSON.stringify({
    processToRestoreMs: began,
    restoreMs: restored - began,
    firstBatchMs: scored - restored,
    totalMs: scored - began,
    rows: handled.scored,
  }),
);
