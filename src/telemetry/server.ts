import { once } from 'node:events';
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { ShoalError } from '../core/index.js';
import { ShoalMetrics } from './metrics.js';
import type { TelemetrySource } from './source.js';
import { statusBody } from './status.js';

export interface TelemetryOptions {
  /** Address to bind (default 127.0.0.1: loopback only unless asked). */
  readonly host?: string;
  /** Port to bind; 0 picks a free one (see `port` after `start`). */
  readonly port: number;
  /** Shoal's version, for shoal_build_info. */
  readonly version: string;
  /** What must be ready before /readyz answers 200, e.g. ['model'] or ['model', 'consumer']. */
  readonly readiness: readonly string[];
}

/** Where to listen, as "HOST:PORT" or ":PORT" (loopback), for command-line options and config fields. */
export function parseListen(text: string, where: string): { host: string; port: number } {
  const m = /^(?:\[([^\]]+)\]|([^:]*)):(\d+)$/.exec(text.trim());
  const port = m === null ? Number.NaN : Number(m[3]);
  if (m === null || !(Number.isInteger(port) && port >= 0 && port <= 65535)) {
    throw new ShoalError(
      'invalid-parameter',
      `${where}: expected HOST:PORT (e.g. 127.0.0.1:9470), got ${JSON.stringify(text)}`,
    );
  }
  return { host: m[1] ?? (m[2] === '' ? '127.0.0.1' : m[2]!), port };
}

/**
 * Shoal's HTTP endpoint for operators (node:http, no framework):
 * - `/metrics`: every metric, Prometheus text format, or OpenMetrics when `Accept` asks for it;
 * - `/healthz`: 200 while the process runs;
 * - `/readyz`: 200 when every readiness part has been set ready, else 503 naming those still waiting;
 * - `/status`: JSON (seats, accuracy, κ, recent drift signals, lag, checkpoint age).
 *
 * @example
 * const telemetry = new TelemetryServer(source, { port: 9470, version, readiness: ['model'] });
 * await telemetry.start();
 * telemetry.setReady('model', true);   // once the model is loaded
 * telemetry.batch(rows, seconds);      // once per scored batch
 * await telemetry.close();
 */
export class TelemetryServer {
  readonly metrics: ShoalMetrics;
  private readonly source: TelemetrySource;
  private readonly options: TelemetryOptions;
  private readonly waiting: Set<string>;
  private server: Server | null = null;

  constructor(source: TelemetrySource, options: TelemetryOptions) {
    this.source = source;
    this.options = options;
    this.metrics = new ShoalMetrics(source, { version: options.version });
    this.waiting = new Set(options.readiness);
  }

  /** The bound port (after `start`). */
  get port(): number {
    return (this.server?.address() as AddressInfo | null)?.port ?? this.options.port;
  }

  get host(): string {
    return this.options.host ?? '127.0.0.1';
  }

  async start(): Promise<void> {
    const server = createServer((req, res) => {
      this.handle(req, res).catch((e: unknown) => {
        if (!res.headersSent) res.writeHead(500, { 'content-type': 'text/plain; charset=utf-8' });
        res.end(`telemetry: ${(e as Error).message}\n`);
      });
    });
    server.listen(this.options.port, this.host);
    const failed = once(server, 'error').then(([e]) => e as Error);
    const result = await Promise.race([once(server, 'listening').then(() => null), failed]);
    if (result !== null) {
      throw new ShoalError(
        'invalid-parameter',
        `telemetry: cannot listen on ${this.host}:${this.options.port}: ${result.message}`,
      );
    }
    this.server = server;
  }

  /** Mark one readiness part ready (or not ready again). */
  setReady(part: string, ready: boolean): void {
    if (!this.options.readiness.includes(part))
      throw new ShoalError('invalid-parameter', `telemetry: unknown readiness part ${JSON.stringify(part)}`);
    if (ready) this.waiting.delete(part);
    else this.waiting.add(part);
  }

  /** Record one scored batch (rows and seconds) for the batch histograms. */
  batch(rows: number, seconds: number): void {
    this.metrics.batch(rows, seconds);
  }

  async close(): Promise<void> {
    const server = this.server;
    if (server === null) return;
    this.server = null;
    server.closeAllConnections();
    server.close();
    await once(server, 'close');
  }

  private async handle(req: IncomingMessage, res: ServerResponse): Promise<void> {
    const path = new URL(req.url ?? '/', 'http://localhost').pathname;
    if (req.method !== 'GET' && req.method !== 'HEAD') {
      res.writeHead(405, { allow: 'GET, HEAD' }).end();
      return;
    }
    switch (path) {
      case '/metrics': {
        const openMetrics = (req.headers.accept ?? '').includes('application/openmetrics-text');
        const { contentType, body } = await this.metrics.scrape(openMetrics);
        res.writeHead(200, { 'content-type': contentType }).end(body);
        return;
      }
      case '/healthz':
        res.writeHead(200, { 'content-type': 'text/plain; charset=utf-8' }).end('ok\n');
        return;
      case '/readyz': {
        const waiting = [...this.waiting];
        res
          .writeHead(waiting.length === 0 ? 200 : 503, { 'content-type': 'text/plain; charset=utf-8' })
          .end(waiting.length === 0 ? 'ready\n' : `not ready: waiting for ${waiting.join(', ')}\n`);
        return;
      }
      case '/status': {
        const body = statusBody(this.source.shape(), this.source.read(), [...this.waiting]);
        res.writeHead(200, { 'content-type': 'application/json' }).end(`${JSON.stringify(body, null, 2)}\n`);
        return;
      }
      default:
        res
          .writeHead(404, { 'content-type': 'text/plain; charset=utf-8' })
          .end('not found: try /metrics, /healthz, /readyz or /status\n');
    }
  }
}
