import { once } from 'node:events';
import { writeFile } from 'node:fs/promises';
import { createServer } from 'node:http';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { scratch } from '../support/cli.js';
import { eventually, Prometheus } from '../support/prometheus.js';

/**
 * The harness itself against a real Prometheus: it starts, scrapes a plain exposition-format endpoint
 * (Prometheus text format 0.0.4), answers queries through its HTTP API and stops.
 */
describe('the Prometheus harness', () => {
  it('scrapes a target and answers queries', async () => {
    let scrapes = 0;
    const server = createServer((_req, res) => {
      scrapes++;
      res.setHeader('content-type', 'text/plain; version=0.0.4');
      res.end(
        `# HELP probe_scrapes_total Scrapes served.\n# TYPE probe_scrapes_total counter\nprobe_scrapes_total ${scrapes}\n`,
      );
    });
    server.listen(0, '127.0.0.1');
    await once(server, 'listening');
    const { port } = server.address() as { port: number };
    const prom = await Prometheus.start({ target: `127.0.0.1:${port}` });
    try {
      await eventually(async () => (await prom.query('probe_scrapes_total')).length > 0, 'a first scrape');
      const up = await prom.query('up');
      expect(up).toHaveLength(1);
      expect(up[0]!.value).toBe(1);
      expect(up[0]!.metric.job).toBe('shoal');
      // The counter rises from scrape to scrape: 1 s intervals.
      const first = (await prom.query('probe_scrapes_total'))[0]!.value;
      await eventually(
        async () => (await prom.query('probe_scrapes_total'))[0]!.value > first,
        'a later scrape',
        20_000,
      );
    } finally {
      await prom.stop();
      server.close();
    }
  }, 60_000);

  it("fails with Prometheus's own log when a rule file does not parse", async () => {
    const dir = await scratch();
    const rules = join(dir, 'bad.yml');
    await writeFile(
      rules,
      'groups:\n  - name: bad\n    rules:\n      - alert: Broken\n        expr: rate(x[\n',
    );
    await expect(Prometheus.start({ target: '127.0.0.1:1', rules: [rules] })).rejects.toThrow(
      /exited with code/,
    );
  });
});
