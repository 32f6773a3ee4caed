/**
 * Topic and group names no other test (nor an earlier run against the same `KAFKA_BROKERS`) uses:
 * the process id, the time the file loaded and a counter.
 */
const run = `${process.pid}-${Date.now().toString(36)}`;
let counter = 0;

export function uniqueName(prefix: string): string {
  counter++;
  return `${prefix}-${run}-${counter}`;
}
