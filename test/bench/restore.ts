import { spawnSync } from 'node:child_process';
import { mkdtemp, readdir, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { eventMessages, ROWS_PER_MESSAGE, rawBatch } from './events.js';
import { type BenchFn, machine, median } from './harness.js';
import { EVENTS_TOPIC, restoreService } from './restore-setup.js';

/**
 * Restore and resume: the `replay` default ensemble (bagging ×10, λ = 6, ADWIN lifecycle) is served
 * 200,000 rows with inline labels (20,000 with `--quick`) through the service's model side, and its
 * checkpoint written as `shoal serve` writes it with `kafka.checkpoint.dir`. A fresh process then takes
 * the session up from that folder (read, check, decode, rebuild) and scores the next 1,000-row message:
 * the time from the start of the restore to that message scored, the median of three processes.
 */
const FETCH_MESSAGES = 8;
const CHILD = fileURLToPath(new URL('./restore-child.ts', import.meta.url));

interface ChildTimes {
  readonly processToRestoreMs: number;
  readonly restoreMs: number;
  readonly firstBatchMs: number;
  readonly totalMs: number;
  readonly rows: number;
}

export const bench: BenchFn = async ({ quick }) => {
  const rows = quick ? 20_000 : 200_000;
  const { messages } = eventMessages(rows + ROWS_PER_MESSAGE, 'bench-restore');
  const dir = await mkdtemp(join(tmpdir(), 'shoal-bench-restore-'));
  try {
    const { models, checkpoints } = restoreService(dir);
    const trained = messages.length - 1;
    const began = performance.now();
    for (let i = 0; i < trained; i += FETCH_MESSAGES) {
      const to = Math.min(trained, i + FETCH_MESSAGES);
      const batch = rawBatch(messages, i, to, Date.now());
      const handled = await models.handle({ topic: EVENTS_TOPIC, partition: 0, messages: batch, lag: 0 });
      checkpoints.read('global', handled.rows);
    }
    const trainSeconds = (performance.now() - began) / 1000;
    const saved = await checkpoints.save(models, Date.now(), true);
    const file = (await readdir(dir)).find((f) => f.endsWith('.shoal'))!;
    const bytes = (await stat(join(dir, file))).size;
    await writeFile(join(dir, 'next-message.arrow'), messages[trained]!);
    const times: ChildTimes[] = [];
    for (let run = 0; run < 3; run++) {
      const child = spawnSync(process.execPath, [...process.execArgv, CHILD, dir, String(trained)], {
        encoding: 'utf8',
        stdio: ['ignore', 'pipe', 'inherit'],
      });
      if (child.status !== 0)
        throw new Error(`the restore process failed (exit ${child.status ?? child.signal})`);
      const t = JSON.parse(child.stdout) as ChildTimes;
      if (t.rows !== ROWS_PER_MESSAGE) throw new Error(`the first batch after resume scored ${t.rows} rows`);
      times.push(t);
    }
    const pick = (f: (t: ChildTimes) => number): number => median(times.map(f));
    const total = pick((t) => t.totalMs);
    const mib = (bytes / 2 ** 20).toFixed(2);
    return {
      title: `Restore and resume: the replay default (bagging ×10, λ = 6, ADWIN lifecycle) after ${rows.toLocaleString('en-US')} rows`,
      rows: [
        {
          name: 'restore + first 1,000-row batch scored',
          rate: total,
          unit: 'ms',
          note: `target ≤ 1,000 ms; checkpoint ${mib} MiB (${saved.written.length} file)`,
        },
        { name: '  read, check, decode, rebuild the session', rate: pick((t) => t.restoreMs), unit: 'ms' },
        { name: '  first batch after resume', rate: pick((t) => t.firstBatchMs), unit: 'ms' },
        {
          name: '  process start to restore start',
          rate: pick((t) => t.processToRestoreMs),
          unit: 'ms',
          note: 'Node + tsx + module loading, not counted',
        },
        { name: 'serving the rows before the checkpoint', rate: rows / trainSeconds, unit: 'rows/s' },
      ],
      json: {
        machine: machine(),
        rows,
        checkpointBytes: bytes,
        totalMs: total,
        restoreMs: pick((t) => t.restoreMs),
        firstBatchMs: pick((t) => t.firstBatchMs),
        processToRestoreMs: pick((t) => t.processToRestoreMs),
        runs: times,
      },
    };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
};
