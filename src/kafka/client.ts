import type { Kafka, SASLOptions } from 'kafkajs';
import type { Logger } from 'pino';
import { registerCodecs } from './codecs.js';
import type { KafkaSettings, Secrets } from './config.js';
import { kafkajsModule } from './kafkajs.js';
import { kafkaLogCreator } from './log.js';

/**
 * A kafkajs client for the settings: brokers, TLS and SASL (PLAIN, SCRAM-SHA-256/512) with secrets read
 * from the environment, kafkajs's log routed into the service's logger.
 */
export function createKafka(
  settings: Pick<KafkaSettings, 'clientId' | 'brokers' | 'tls' | 'sasl'>,
  secrets: Secrets,
  log: Logger,
): Kafka {
  registerCodecs();
  const { Kafka, logLevel } = kafkajsModule();
  const tls = settings.tls;
  const sasl = settings.sasl;
  return new Kafka({
    clientId: settings.clientId,
    brokers: [...settings.brokers],
    ...(tls === null
      ? {}
      : {
          ssl: {
            rejectUnauthorized: tls.rejectUnauthorized,
            ...(secrets.ca === null ? {} : { ca: [secrets.ca] }),
            ...(secrets.cert === null ? {} : { cert: secrets.cert }),
            ...(secrets.key === null ? {} : { key: secrets.key }),
          },
        }),
    ...(sasl === null
      ? {}
      : {
          sasl: {
            mechanism: sasl.mechanism,
            username: sasl.username,
            password: secrets.password ?? '',
          } as SASLOptions,
        }),
    logLevel: logLevel.DEBUG,
    logCreator: kafkaLogCreator(log),
    retry: { retries: 8, initialRetryTime: 200, maxRetryTime: 5_000 },
  });
}
