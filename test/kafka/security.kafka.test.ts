import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, describe, expect, inject, it } from 'vitest';
import { stringify } from 'yaml';
import { scratch } from '../support/cli.js';
import { SASL_PASSWORD, SASL_USER } from '../support/kafka-broker.js';
import { createServeTopics, kafkaSection, serveTopics } from '../support/kafka-config.js';
import { arrowMessage, seaEvents } from '../support/kafka-events.js';
import { countScoreRows, killServes, produce, readTopic, ServeProcess } from '../support/kafka-serve.js';
import { freePort } from '../support/prometheus.js';

describe('SASL and secrets', () => {
  afterEach(killServes);

  for (const mechanism of ['plain', 'scram-sha-256', 'scram-sha-512']) {
    it(`serves over SASL ${mechanism} with the password from the environment, and no log line, /status or /metrics holds it`, async () => {
      const sasl = inject('kafkaSaslBrokers');
      if (sasl === '') return; // KAFKA_BROKERS names an outside cluster: the harness's SASL user is not there.
      const brokers = inject('kafkaBrokers');
      const t = serveTopics();
      await createServeTopics(brokers, t);
      const events = seaEvents(500, 31);
      await produce(brokers, t.events, [{ value: arrowMessage(events, 0, 500) }]);
      const config = join(await scratch(), 'shoal.yaml');
      const port = await freePort();
      await writeFile(
        config,
        stringify({
          seed: 1,
          ensemble: { kind: 'bagging', members: 2 },
          inputs: { id: 'id' },
          kafka: kafkaSection(sasl, t, {
            sasl: { mechanism, username: SASL_USER, passwordEnv: 'SHOAL_TEST_KAFKA_PASSWORD' },
          }),
          telemetry: { listen: `127.0.0.1:${port}` },
        }),
      );
      const serve = new ServeProcess(config, { SHOAL_TEST_KAFKA_PASSWORD: SASL_PASSWORD });
      await readTopic(brokers, t.scores, (seen) => countScoreRows(seen) >= 500);
      // The telemetry endpoint, read while the service runs, holds no secret either.
      for (const path of ['/status', '/metrics', '/readyz']) {
        const body = await (await fetch(`http://127.0.0.1:${port}${path}`)).text();
        expect(body.length).toBeGreaterThan(0);
        expect(body, path).not.toContain(SASL_PASSWORD);
      }
      serve.signal('SIGTERM');
      expect(await serve.exited, serve.stderr).toBe(0);
      // Debug level: every kafkajs line, including the SASL handshake, went through the logger.
      expect(serve.logs().some((l) => String(l.msg).includes('SASL'))).toBe(true);
      expect(serve.stdout).not.toContain(SASL_PASSWORD);
      expect(serve.stderr).not.toContain(SASL_PASSWORD);
    });
  }
});
