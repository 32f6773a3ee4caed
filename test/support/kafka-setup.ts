import type { TestProject } from 'vitest/node';
import { KafkaBroker } from './kafka-broker.js';

/**
 * Global setup of the `kafka` test project (files named `*.kafka.test.ts`): the bootstrap address every
 * such test reads with `inject('kafkaBrokers')` (and `inject('kafkaSaslBrokers')`, the SASL listener). `KAFKA_BROKERS` (comma-separated host:port) points the
 * tests at a running cluster; otherwise one broker is started for the whole run and stopped at its end.
 * Vitest calls this only when a test of the project is queued, so unit-only runs start no JVM.
 */
export default async function setup(project: TestProject): Promise<(() => Promise<void>) | undefined> {
  const external = process.env.KAFKA_BROKERS;
  if (external !== undefined && external.trim() !== '') {
    project.provide('kafkaBrokers', external.trim());
    project.provide('kafkaSaslBrokers', '');
    return undefined;
  }
  const broker = await KafkaBroker.start();
  process.stdout.write(
    `  · Kafka broker ${broker.bootstrap} started in ${Math.round(broker.startMillis)} ms\n`,
  );
  project.provide('kafkaBrokers', broker.bootstrap);
  project.provide('kafkaSaslBrokers', broker.saslBootstrap);
  return () => broker.destroy();
}

declare module 'vitest' {
  export interface ProvidedContext {
    kafkaBrokers: string;
    /** The harness broker's SASL listener (user SASL_USER), or '' with KAFKA_BROKERS. */
    kafkaSaslBrokers: string;
  }
}
