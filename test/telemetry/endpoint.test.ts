import { register as globalRegistry } from 'prom-client';
import { afterEach, describe, expect, it } from 'vitest';
import { LearningSession, resolveConfig } from '../../src/pipeline/index.js';
import { buildStream, type StreamGenerator } from '../../src/streams/index.js';
import { parseListen, SessionTelemetry, TelemetryServer } from '../../src/telemetry/index.js';
import { frameOf, labelsFrame, manualClock } from '../pipeline/session-support.js';
import { note } from '../support/note.js';
import { promtoolCheckMetrics } from '../support/prometheus.js';
import { withTelemetry } from './session-telemetry.js';

/**
 * Shoal's telemetry endpoint on a real loopback socket, fed by a real learning loop: readiness, status,
 * both exposition formats, the format checked by Prometheus's own `promtool check metrics`, and a
 * label set that does not grow with the length of the run.
 */
interface Running {
  readonly session: LearningSession;
  readonly server: TelemetryServer;
  readonly url: string;
  feed(rows: number): void;
}

const open: TelemetryServer[] = [];
afterEach(async () => {
  await Promise.all(open.splice(0).map((s) => s.close()));
});

async function running(gen: StreamGenerator, raw: unknown = {}): Promise<Running> {
  const { session, telemetry } = withTelemetry(raw);
  const server = new TelemetryServer(telemetry, { port: 0, version: '0.0.0-test', readiness: ['model'] });
  await server.start();
  open.push(server);
  return {
    session,
    server,
    url: `http://127.0.0.1:${server.port}`,
    feed(rows: number) {
      for (let done = 0; done < rows; done += 1000) {
        const n = Math.min(1000, rows - done);
        session.score(frameOf(gen, n), gen.classes);
        server.batch(n, 0.001);
        server.setReady('model', true);
      }
    },
  };
}

async function get(url: string, accept?: string): Promise<{ status: number; type: string; body: string }> {
  const res = await fetch(url, accept === undefined ? {} : { headers: { accept } });
  return { status: res.status, type: res.headers.get('content-type') ?? '', body: await res.text() };
}

/** The sample lines of an exposition (series), without comments. */
function series(body: string): string[] {
  return body.split('\n').filter((l) => l !== '' && !l.startsWith('#'));
}

const sea = (concepts = '9.5,7', every = 25_000) =>
  buildStream({ generator: 'sea', concepts, every, seed: 7 });

describe('the telemetry endpoint', () => {
  it('is alive at once but not ready until the model is loaded', async () => {
    const run = await running(sea());
    expect((await get(`${run.url}/healthz`)).status).toBe(200);
    const before = await get(`${run.url}/readyz`);
    expect(before.status).toBe(503);
    expect(before.body).toMatch(/waiting for model/);
    const status = JSON.parse((await get(`${run.url}/status`)).body);
    expect(status).toMatchObject({ ready: false, waitingFor: ['model'], ensemble: null, seats: [] });
    run.feed(1000);
    expect((await get(`${run.url}/readyz`)).status).toBe(200);
    expect((await get(`${run.url}/nowhere`)).status).toBe(404);
  });

  it('with a consumer, is ready only once the model is loaded and the consumer has joined', async () => {
    const { telemetry } = withTelemetry();
    const server = new TelemetryServer(telemetry, {
      port: 0,
      version: '0.0.0-test',
      readiness: ['model', 'consumer'],
    });
    await server.start();
    open.push(server);
    const url = `http://127.0.0.1:${server.port}/readyz`;
    expect(await get(url)).toMatchObject({ status: 503, body: 'not ready: waiting for model, consumer\n' });
    server.setReady('model', true);
    expect(await get(url)).toMatchObject({ status: 503, body: 'not ready: waiting for consumer\n' });
    server.setReady('consumer', true);
    expect((await get(url)).status).toBe(200);
    // A rebalance takes the consumer out of its group: not ready again until it rejoins.
    server.setReady('consumer', false);
    expect((await get(url)).status).toBe(503);
    expect(() => server.setReady('brokers', true)).toThrow(/unknown readiness part "brokers"/);
  });

  it('reports seats, accuracy, kappa and recent drift signals on /status', async () => {
    const run = await running(sea('9.5,7', 5000));
    run.feed(15_000);
    const status = JSON.parse((await get(`${run.url}/status`)).body);
    expect(status.ready).toBe(true);
    expect(status.ensemble).toBe('bagging');
    expect(status.events).toEqual({ scored: 15_000, trained: 15_000 });
    expect(status.seats).toHaveLength(10);
    expect(status.accuracy).toBeCloseTo(run.session.recentAccuracy!, 12);
    expect(status.kappa).toBeCloseTo(run.session.metrics.windowKappa!, 12);
    expect(status.recentSignals.length).toBeGreaterThan(0);
    for (const s of status.seats) expect(['warming', 'active', 'watched', 'retired']).toContain(s.state);
  });

  it('publishes pending predictions, label outcomes and label delays of late labels', async () => {
    const clock = manualClock();
    let telemetry: SessionTelemetry | null = null;
    const session = new LearningSession({
      config: resolveConfig({ labels: { pending: 1000, earlyWaitSeconds: 60 } }, 'test'),
      source: 'test stream',
      journal: { write: (r) => telemetry?.record(r), flush: async () => {} },
      clock,
      version: '0.0.0-test',
    });
    telemetry = SessionTelemetry.of(session, { checkpoints: false, wall: () => clock.wallNow });
    const server = new TelemetryServer(telemetry, { port: 0, version: '0.0.0-test', readiness: ['model'] });
    await server.start();
    open.push(server);
    // 600 events with ids, their labels held back; 500 labels arrive 30 s later, one for an unknown id.
    const events = frameOf(sea(), 600, { ids: true, hide: () => true });
    session.score(events, ['0', '1']);
    clock.wallNow += 30_000;
    const ids = [...events.ids!.slice(0, 499), 'nobody'];
    session.learn(labelsFrame(ids, events.truth.slice(0, 500)), ['0', '1']);
    const body = (await get(`http://127.0.0.1:${server.port}/metrics`)).body;
    expect(body).toMatch(/^shoal_pending_labels 101$/m);
    expect(body).toMatch(/^shoal_pending_labels_capacity 1000$/m);
    expect(body).toMatch(/^shoal_labels_total\{outcome="joined"\} 499$/m);
    // The label for an id never scored is held for its event: not orphaned yet.
    expect(body).toMatch(/^shoal_labels_total\{outcome="orphaned"\} 0$/m);
    expect(body).toMatch(/^shoal_early_labels 1$/m);
    expect(body).toMatch(/^shoal_label_delay_seconds_count 499$/m);
    expect(body).toMatch(/^shoal_label_delay_seconds_sum 14970$/m);
    expect(body).toMatch(/^shoal_label_delay_seconds_bucket\{le="\+Inf"\} 499$/m);
    // Every delay was 30 s: no bucket below 30 s holds one.
    const below = [...body.matchAll(/^shoal_label_delay_seconds_bucket\{le="([0-9.e+]+)"\} (\d+)$/gm)].filter(
      (m) => Number(m[1]) < 30,
    );
    expect(below.length).toBeGreaterThan(0);
    for (const m of below) expect(m[2]).toBe('0');
    // Its event never comes: past labels.earlyWaitSeconds the label is let go and counted orphaned.
    clock.wallNow += 61_000;
    session.expire();
    const after = (await get(`http://127.0.0.1:${server.port}/metrics`)).body;
    expect(after).toMatch(/^shoal_labels_total\{outcome="orphaned"\} 1$/m);
    expect(after).toMatch(/^shoal_early_labels 0$/m);
  });

  it('writes the Prometheus text format, and OpenMetrics when Accept asks for it', async () => {
    const run = await running(sea());
    run.feed(2000);
    const text = await get(`${run.url}/metrics`);
    expect(text.type).toMatch(/^text\/plain; version=0\.0\.4/);
    expect(text.body).toMatch(/^shoal_events_total\{outcome="scored"\} 2000$/m);
    expect(text.body).toMatch(
      /^shoal_build_info\{version="0\.0\.0-test",nodejs="[^"]+",ensemble="bagging"\} 1$/m,
    );
    const om = await get(
      `${run.url}/metrics`,
      'application/openmetrics-text; version=1.0.0,text/plain;q=0.5',
    );
    expect(om.type).toMatch(/^application\/openmetrics-text; version=1\.0\.0/);
    // OpenMetrics names a counter family without its _total suffix and ends with # EOF.
    expect(om.body).toMatch(/^# TYPE shoal_events counter$/m);
    expect(om.body.trimEnd().endsWith('# EOF')).toBe(true);
    // Nothing goes to prom-client's process-wide registry.
    expect(await globalRegistry.metrics()).not.toMatch(/shoal_/);
  });

  it('passes promtool check metrics on a real scrape', async () => {
    const run = await running(sea('9.5,7', 5000));
    run.feed(12_000);
    // Prometheus asks for OpenMetrics when it scrapes; the text format served after such a scrape is
    // the one checked (prom-client renames counters in place during an OpenMetrics scrape).
    await get(`${run.url}/metrics`, 'application/openmetrics-text; version=1.0.0,text/plain;q=0.5');
    const { body } = await get(`${run.url}/metrics`);
    // Prometheus's own linter of the exposition format (promtool, Debian's prometheus package):
    // exit 0 and no output means no problems.
    const checked = await promtoolCheckMetrics(body);
    expect(checked.out).toBe('');
    expect(checked.code).toBe(0);
    // It does find problems: a counter without _total and a metric without HELP.
    const broken = await promtoolCheckMetrics('# TYPE shoal_bad counter\nshoal_bad 1\n');
    expect(broken.out).toMatch(/shoal_bad/);
  });

  it('has as many series after 100,000 rows with at least 20 replacements as after 1,000', async () => {
    const run = await running(sea('8,9,7,9.5,8', 20_000));
    run.feed(1000);
    const early = series((await get(`${run.url}/metrics`)).body);
    run.feed(99_000);
    const late = series((await get(`${run.url}/metrics`)).body);
    const replaced =
      run.session.metrics.lifecycleCounts().promoted + run.session.metrics.lifecycleCounts().fresh;
    note(
      `series after 1,000 rows: ${early.length}; after 100,000 rows with ${replaced} replacements: ${late.length}`,
    );
    expect(replaced).toBeGreaterThanOrEqual(20);
    const names = (lines: string[]) => lines.map((l) => l.slice(0, l.lastIndexOf(' ')));
    expect(names(late)).toEqual(names(early));
  });
});

describe('parseListen', () => {
  it('reads HOST:PORT and :PORT, and names the option when it cannot', () => {
    expect(parseListen('127.0.0.1:9470', 'x')).toEqual({ host: '127.0.0.1', port: 9470 });
    expect(parseListen(':9470', 'x')).toEqual({ host: '127.0.0.1', port: 9470 });
    expect(parseListen('[::1]:80', 'x')).toEqual({ host: '::1', port: 80 });
    expect(() => parseListen('9470', 'replay --metrics')).toThrow(/replay --metrics: expected HOST:PORT/);
    expect(() => parseListen('h:70000', 'replay --metrics')).toThrow(/HOST:PORT/);
  });
});
