// Print the newest rows of a scores topic that `shoal serve` writes (Arrow IPC messages), for the
// README's broker walk-through:
//   node deploy/read-scores.mjs [--brokers HOST:PORT] [--topic legs-scores] [--rows 10]
// It reads the topic from its start up to the end offsets it finds when it starts, then prints the last
// rows and how many it read. Uses kafkajs and apache-arrow, Shoal's own dependencies.
import { parseArgs } from 'node:util';
import { tableFromIPC } from 'apache-arrow';
import kafkajs from 'kafkajs';

const { values } = parseArgs({
  options: {
    brokers: { type: 'string', default: '127.0.0.1:9092' },
    topic: { type: 'string', default: 'legs-scores' },
    rows: { type: 'string', default: '10' },
  },
});
const show = Number(values.rows);
const kafka = new kafkajs.Kafka({
  clientId: 'shoal-read-scores',
  brokers: values.brokers.split(','),
  logLevel: kafkajs.logLevel.NOTHING,
});
const admin = kafka.admin();
await admin.connect();
const ends = await admin.fetchTopicOffsets(values.topic);
await admin.disconnect();
const remaining = new Map(ends.filter((p) => p.high !== p.low).map((p) => [p.partition, BigInt(p.high)]));
const rows = [];
if (remaining.size > 0) {
  const consumer = kafka.consumer({ groupId: `shoal-read-scores-${process.pid}-${Date.now()}` });
  await consumer.connect();
  await consumer.subscribe({ topic: values.topic, fromBeginning: true });
  await new Promise((done) => {
    consumer.run({
      eachMessage: async ({ partition, message }) => {
        for (const r of tableFromIPC(message.value).toArray()) rows.push(r.toJSON());
        if (BigInt(message.offset) + 1n >= (remaining.get(partition) ?? 0n)) remaining.delete(partition);
        if (remaining.size === 0) done();
      },
    });
  });
  await consumer.disconnect();
}
const cell = (v) =>
  typeof v === 'number' ? (Number.isInteger(v) ? String(v) : v.toFixed(3)) : v === null ? '–' : String(v);
const shown = rows.slice(-show);
const columns = shown.length === 0 ? [] : Object.keys(shown[0]).filter((c) => c !== 'event_time');
const widths = columns.map((c) => Math.max(c.length, ...shown.map((r) => cell(r[c]).length)));
const line = (cells) => cells.map((c, i) => c.padStart(widths[i])).join('  ');
process.stdout.write(`${rows.length} score rows on ${values.topic}; the last ${shown.length}:\n`);
if (shown.length > 0) {
  process.stdout.write(`${line(columns)}\n`);
  for (const r of shown) process.stdout.write(`${line(columns.map((c) => cell(r[c])))}\n`);
}
