import { type ChildProcess, execFile, spawn } from 'node:child_process';
import { once } from 'node:events';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

/**
 * A real Prometheus server for tests (Debian's `prometheus` package; `.ci/run` installs it): bound to
 * 127.0.0.1 on a free port, 1 s scrape and rule-evaluation intervals, a temporary data directory, the
 * rule files a test names, and one scrape target. Queries go through its HTTP API (`/api/v1/…`).
 *
 * Prometheus spreads its targets over the scrape interval and waits for its first scrape, so a test
 * polls (`eventually`) for what it expects with a bound, never asserting how long anything took.
 *
 * @example
 * const prom = await Prometheus.start({ target: '127.0.0.1:9464', rules: ['deploy/prometheus/shoal-alerts.yml'] });
 * try {
 *   await eventually(async () => (await prom.query('up'))[0]?.value === 1, 'the target to be up');
 * } finally {
 *   await prom.stop();
 * }
 */
export interface PrometheusOptions {
  /** host:port of the endpoint to scrape (its /metrics path). */
  readonly target: string;
  /** Rule files to load (absolute or relative to the working directory). */
  readonly rules?: readonly string[];
  /** The job label of the target (default "shoal"). */
  readonly job?: string;
}

/** One element of an instant vector, with its value as a number. */
export interface Sample {
  readonly metric: Readonly<Record<string, string>>;
  readonly value: number;
}

/** One alert as /api/v1/alerts lists it. */
export interface Alert {
  readonly labels: Readonly<Record<string, string>>;
  readonly annotations: Readonly<Record<string, string>>;
  readonly state: 'pending' | 'firing';
  readonly activeAt: string;
}

const READY_WITHIN_MS = 30_000;
const STOP_WITHIN_MS = 10_000;

export class Prometheus {
  /** Base URL of the server's HTTP API, e.g. http://127.0.0.1:40123. */
  readonly url: string;
  private readonly process: ChildProcess;
  private readonly dir: string;
  private readonly log: string[];

  private constructor(url: string, child: ChildProcess, dir: string, log: string[]) {
    this.url = url;
    this.process = child;
    this.dir = dir;
    this.log = log;
  }

  /** Start Prometheus and wait until /-/ready answers 200 (or fail with its log). */
  static async start(options: PrometheusOptions): Promise<Prometheus> {
    const dir = await mkdtemp(join(tmpdir(), 'shoal-prometheus-'));
    const port = await freePort();
    const config = join(dir, 'prometheus.yml');
    await writeFile(config, configText(options));
    const log: string[] = [];
    const child = spawn(
      'prometheus',
      [
        `--config.file=${config}`,
        `--storage.tsdb.path=${join(dir, 'data')}`,
        `--web.listen-address=127.0.0.1:${port}`,
        '--log.level=warn',
      ],
      { stdio: ['ignore', 'ignore', 'pipe'] },
    );
    child.stderr?.setEncoding('utf8').on('data', (chunk: string) => {
      log.push(chunk);
      if (log.length > 200) log.shift();
    });
    const prom = new Prometheus(`http://127.0.0.1:${port}`, child, dir, log);
    const exited = once(child, 'exit').then(([code]) => code as number | null);
    const spawnFailed = once(child, 'error').then(([e]) => e as Error);
    const deadline = Date.now() + READY_WITHIN_MS;
    for (;;) {
      const early = await Promise.race([exited, spawnFailed, sleep(200).then(() => undefined)]);
      if (early instanceof Error) {
        await rm(dir, { recursive: true, force: true });
        throw new Error(`prometheus did not start (${early.message}); install Debian's prometheus package`);
      }
      if (early !== undefined) {
        await rm(dir, { recursive: true, force: true });
        throw new Error(`prometheus exited with code ${early} before it was ready:\n${log.join('')}`);
      }
      if (await prom.ready()) return prom;
      if (Date.now() > deadline) {
        await prom.stop();
        throw new Error(`prometheus was not ready within ${READY_WITHIN_MS} ms:\n${log.join('')}`);
      }
    }
  }

  /** Evaluate an instant query now. */
  async query(expr: string): Promise<Sample[]> {
    const data = (await this.api(`/api/v1/query?query=${encodeURIComponent(expr)}`)) as {
      resultType: string;
      result: { metric: Record<string, string>; value: [number, string] }[];
    };
    if (data.resultType !== 'vector') throw new Error(`${expr}: expected a vector, got ${data.resultType}`);
    return data.result.map((r) => ({ metric: r.metric, value: Number(r.value[1]) }));
  }

  /** The alerts that are pending or firing now. */
  async alerts(): Promise<Alert[]> {
    return ((await this.api('/api/v1/alerts')) as { alerts: Alert[] }).alerts;
  }

  /** The state of the scrape targets (health "up" once a scrape succeeded). */
  async targets(): Promise<{ health: string; lastError: string }[]> {
    return ((await this.api('/api/v1/targets')) as { activeTargets: { health: string; lastError: string }[] })
      .activeTargets;
  }

  /** Prometheus's recent log lines (warnings and errors), for failure messages. */
  get logText(): string {
    return this.log.join('');
  }

  /** SIGTERM, wait for the exit (SIGKILL after a bound), remove the data directory. */
  async stop(): Promise<void> {
    const child = this.process;
    if (child.exitCode === null && child.signalCode === null) {
      const exited = once(child, 'exit');
      child.kill('SIGTERM');
      const timer = setTimeout(() => child.kill('SIGKILL'), STOP_WITHIN_MS);
      await exited;
      clearTimeout(timer);
    }
    await rm(this.dir, { recursive: true, force: true });
  }

  private async ready(): Promise<boolean> {
    try {
      const res = await fetch(`${this.url}/-/ready`);
      await res.arrayBuffer();
      return res.status === 200;
    } catch {
      return false;
    }
  }

  private async api(path: string): Promise<unknown> {
    const res = await fetch(`${this.url}${path}`);
    const body = (await res.json()) as { status: string; data?: unknown; error?: string };
    if (body.status !== 'success') throw new Error(`prometheus ${path}: ${body.error ?? res.status}`);
    return body.data;
  }
}

/**
 * Poll `check` every `everyMs` until it returns true; fail naming `what` after `withinMs`. Bounds how
 * long a test waits for something asynchronous without asserting how long it took.
 */
export async function eventually(
  check: () => Promise<boolean>,
  what: string,
  withinMs = 60_000,
  everyMs = 500,
): Promise<void> {
  const deadline = Date.now() + withinMs;
  for (;;) {
    if (await check()) return;
    if (Date.now() > deadline) throw new Error(`gave up waiting for ${what} after ${withinMs} ms`);
    await sleep(everyMs);
  }
}

export function sleep(ms: number): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, ms));
}

/** Prometheus's own linter of the exposition format (`promtool check metrics`) on `body`. */
export function promtoolCheckMetrics(body: string): Promise<{ code: number; out: string }> {
  return new Promise((resolve) => {
    const child = execFile('promtool', ['check', 'metrics'], (error, stdout, stderr) => {
      resolve({ code: error === null ? 0 : ((error as { code?: number }).code ?? 1), out: stdout + stderr });
    });
    child.stdin!.end(body);
  });
}

/** A port that was free a moment ago on 127.0.0.1. */
export async function freePort(): Promise<number> {
  const server = createServer();
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const address = server.address();
  server.close();
  await once(server, 'close');
  if (address === null || typeof address === 'string') throw new Error('no port from the loopback listener');
  return address.port;
}

function configText(options: PrometheusOptions): string {
  const rules = (options.rules ?? []).map((r) => `  - ${JSON.stringify(resolve(r))}`).join('\n');
  return `global:
  scrape_interval: 1s
  scrape_timeout: 1s
  evaluation_interval: 1s
rule_files:
${rules.length > 0 ? rules : '  []'}
scrape_configs:
  - job_name: ${JSON.stringify(options.job ?? 'shoal')}
    static_configs:
      - targets: [${JSON.stringify(options.target)}]
`;
}
