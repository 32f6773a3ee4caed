import { KafkaBroker } from './kafka-broker.js';

/**
 * `npm run broker [-- PORT]`: the test harness's broker (one KRaft node, Apache Kafka 4.1.1 from Maven
 * Central's jars, `auto.create.topics.enable=false`) in the foreground on 127.0.0.1:PORT (default 9092),
 * for trying `shoal serve` by hand (README, "Trying it on a real broker"). Ctrl-C stops it and deletes
 * its data.
 */
const port = Number(process.argv[2] ?? 9092);
if (!(Number.isInteger(port) && port > 0 && port < 65536)) {
  process.stderr.write(`npm run broker: expected a port number, got ${JSON.stringify(process.argv[2])}\n`);
  process.exit(2);
}
process.stdout.write('starting Apache Kafka 4.1.1 (the first start resolves its jars with Maven)…\n');
const broker = await KafkaBroker.start(port);
process.stdout.write(
  `Kafka broker on ${broker.bootstrap} (started in ${(broker.startMillis / 1000).toFixed(1)} s; log ${broker.logPath}). Ctrl-C stops it.\n`,
);
const stop = async (): Promise<void> => {
  await broker.destroy();
  process.stdout.write('broker stopped, data deleted\n');
  process.exit(0);
};
process.once('SIGINT', () => void stop());
process.once('SIGTERM', () => void stop());
