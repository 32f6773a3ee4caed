import { type ChildProcess, execFile, spawn } from 'node:child_process';
import { once } from 'node:events';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { scratch, shoal } from '../support/cli.js';
import { note } from '../support/note.js';
import { eventually, freePort, Prometheus, sleep } from '../support/prometheus.js';

/**
 * End to end, with nothing mocked: the `shoal` binary (dist/, built by `npm test`) replays a recorded
 * SEA stream (Street & Kim, KDD 2001) at a live stream's pace with its metrics endpoint on; a real
 * Prometheus (Debian's package) with 1 s scrape and evaluation intervals scrapes it and evaluates
 * deploy/prometheus/shoal-alerts.yml. The concept changes abruptly from θ = 9.5 to θ = 7 at row 20,000:
 * 20.6% of the plane changes class ((9.5² − 7²)/200, derived), so the served accuracy must drop.
 */
const CHANGE = 20_000;
const ROWS = 40_000;
const PACE = 1000;
const RULES = 'deploy/prometheus/shoal-alerts.yml';

const children: ChildProcess[] = [];
const servers: Prometheus[] = [];
afterEach(async () => {
  for (const child of children.splice(0)) {
    if (child.exitCode === null && child.signalCode === null) {
      const exited = once(child, 'exit');
      child.kill('SIGTERM');
      await exited;
    }
  }
  await Promise.all(servers.splice(0).map((p) => p.stop()));
});

/** Start `shoal ARGS` as a child process; its output is kept for failure messages. */
function spawnShoal(args: string[]): { child: ChildProcess; output: () => string } {
  const child = spawn(process.execPath, ['bin/shoal.js', ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
  children.push(child);
  let output = '';
  child.stdout!.setEncoding('utf8').on('data', (t: string) => {
    output += t;
  });
  child.stderr!.setEncoding('utf8').on('data', (t: string) => {
    output += t;
  });
  return { child, output: () => output };
}

async function fetchText(url: string): Promise<{ status: number; body: string }> {
  try {
    const res = await fetch(url);
    return { status: res.status, body: await res.text() };
  } catch {
    return { status: 0, body: '' };
  }
}

function promtoolCheckMetrics(body: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const child = execFile('promtool', ['check', 'metrics'], (error, stdout, stderr) => {
      if (error !== null && stdout + stderr === '') reject(error);
      else resolve(stdout + stderr);
    });
    child.stdin!.end(body);
  });
}

describe('Shoal under a real Prometheus', () => {
  it('raises the concept-drift alert after an abrupt change, and not before', async () => {
    const dir = await scratch();
    const stream = join(dir, 'sea.arrow');
    const wrote = await shoal(
      'spawn',
      'sea',
      '--rows',
      String(ROWS),
      '--seed',
      '11',
      '--concepts',
      '9.5,7',
      '--every',
      String(CHANGE),
      '--out',
      stream,
    );
    expect(wrote.code).toBe(0);
    const port = await freePort();
    const target = `127.0.0.1:${port}`;
    const prom = await Prometheus.start({ target, rules: [RULES] });
    servers.push(prom);
    const run = spawnShoal(['replay', stream, '--metrics', target, '--pace', String(PACE), '--json']);
    await eventually(async () => (await fetchText(`http://${target}/healthz`)).status === 200, 'shoal up');

    // A real scrape of the running process passes Prometheus's own format check.
    await eventually(async () => (await fetchText(`http://${target}/readyz`)).status === 200, 'shoal ready');
    expect(await promtoolCheckMetrics((await fetchText(`http://${target}/metrics`)).body)).toBe('');

    const scored = async () =>
      (await prom.query('shoal_events_total{outcome="scored"}'))[0]?.value ?? Number.NaN;
    const driftSignals = async () =>
      (await prom.query('sum(shoal_drift_signals_total{level="drift"})'))[0]?.value ?? Number.NaN;
    let signalsBefore = Number.NaN;
    let scrapesBefore = 0;
    let changeSeen = Number.NaN;
    let firingAt = Number.NaN;
    const deadline = Date.now() + (ROWS / PACE) * 1000 * 3;
    // Poll: the alert is read first and the row count second, so an alert seen while Prometheus's
    // latest count is still before the change was raised on pre-change data.
    while (Date.now() < deadline) {
      const alerts = (await prom.alerts()).filter((a) => a.labels.alertname === 'ShoalConceptDrift');
      const rows = await scored();
      if (alerts.length > 0 && !(rows >= CHANGE)) {
        throw new Error(
          `ShoalConceptDrift ${alerts[0]!.state} at row ${rows}, before the change at ${CHANGE}`,
        );
      }
      if (rows < CHANGE) {
        scrapesBefore =
          (await prom.query(`count_over_time(shoal_events_total{outcome="scored"}[5m])`))[0]?.value ?? 0;
        signalsBefore = await driftSignals();
      } else if (rows >= CHANGE && Number.isNaN(changeSeen)) {
        changeSeen = Date.now();
      }
      const firing = alerts.find((a) => a.state === 'firing');
      if (firing !== undefined) {
        firingAt = Date.now();
        // The page a person receives: labels and rendered annotations from shoal-alerts.yml.
        expect(firing.labels).toMatchObject({ severity: 'page', job: 'shoal', instance: target });
        expect(firing.annotations.summary).toBe(`Concept drift on ${target}`);
        expect(firing.annotations.description).toMatch(/Runbook: README "ShoalConceptDrift"/);
        break;
      }
      if (run.child.exitCode !== null) break;
      await sleep(500);
    }
    expect(scrapesBefore, 'Prometheus scraped the run before the change').toBeGreaterThanOrEqual(5);
    expect(Number.isNaN(firingAt), `the alert fired (shoal: ${run.output()}\n${prom.logText})`).toBe(false);
    note(
      `ShoalConceptDrift firing ${((firingAt - changeSeen) / 1000).toFixed(1)} s after Prometheus saw row ${CHANGE} (${scrapesBefore} scrapes before it)`,
    );
    // Bounded, not timed: within the post-change part of the replay.
    expect(firingAt - changeSeen).toBeLessThan(((ROWS - CHANGE) / PACE) * 1000);
    // Prometheus's own record agrees, between polls too: the first sample of the alert's ALERTS series
    // is no earlier than the first scrape that counted a row past the change.
    const first = async (expr: string) =>
      (await prom.query(`min_over_time(timestamp(${expr})[10m:1s])`))[0]?.value ?? Number.NaN;
    // (Subquery steps fall on whole seconds: wait until the alert's first sample is behind one.)
    await sleep(2000);
    const alertStart = await first('ALERTS{alertname="ShoalConceptDrift"}');
    const changeStart = await first(`shoal_events_total{outcome="scored"} >= ${CHANGE}`);
    // The two are read at the subquery's 1 s resolution: one CI run measured the change's first sample on
    // a whole second (386.785 for the alert against 387.000), so an alert within one step of it counts as
    // after it. The polls above already check the order at the scrape itself.
    expect(alertStart).toBeGreaterThanOrEqual(changeStart - 1);
    // The member drift-signal counter rose after the change.
    await eventually(async () => (await driftSignals()) > signalsBefore, 'drift signals to rise', 30_000);
    note(`drift signals: ${signalsBefore} before the change, ${await driftSignals()} after`);
  });

  it('never shows a value of the configuration on /status or /metrics', async () => {
    const dir = await scratch();
    const stream = join(dir, 'sea.arrow');
    expect((await shoal('spawn', 'sea', '--rows', '20000', '--seed', '3', '--out', stream)).code).toBe(0);
    // The seed stands in for a secret: a configuration string that nothing outside the run should show.
    const secret = 'tok-5e7c2f9a41d8b306';
    const config = join(dir, 'shoal.yaml');
    await writeFile(config, `seed: ${secret}\nevaluation:\n  window: 500\n`);
    const port = await freePort();
    const target = `127.0.0.1:${port}`;
    const run = spawnShoal(['replay', stream, '--config', config, '--metrics', target, '--pace', '5000']);
    await eventually(async () => (await fetchText(`http://${target}/readyz`)).status === 200, 'shoal ready');
    const status = await fetchText(`http://${target}/status`);
    const metrics = await fetchText(`http://${target}/metrics`);
    expect(status.status).toBe(200);
    expect(JSON.parse(status.body).seats).toHaveLength(10);
    expect(status.body).not.toContain(secret);
    expect(metrics.body).not.toContain(secret);
    const [code] = await once(run.child, 'exit');
    expect(code, run.output()).toBe(0);
  });

  it('publishes the checkpoint age while replay writes checkpoints, and not without them', async () => {
    const dir = await scratch();
    const stream = join(dir, 'sea.arrow');
    expect((await shoal('spawn', 'sea', '--rows', '20000', '--seed', '5', '--out', stream)).code).toBe(0);
    const port = await freePort();
    const target = `127.0.0.1:${port}`;
    const run = spawnShoal([
      'replay',
      stream,
      '--checkpoint',
      join(dir, 'checkpoints'),
      '--checkpoint-every',
      '2000',
      '--metrics',
      target,
      '--pace',
      '5000',
    ]);
    // The first checkpoint is due at 2,000 rows: from then on the age is that of the newest one.
    let age = Number.NaN;
    await eventually(async () => {
      const body = (await fetchText(`http://${target}/metrics`)).body;
      const scored = Number(/^shoal_events_total\{outcome="scored"\} (\d+)$/m.exec(body)?.[1] ?? 0);
      age = Number(/^shoal_checkpoint_age_seconds (\S+)$/m.exec(body)?.[1]);
      return scored >= 4000;
    }, 'rows past two checkpoints');
    expect(age).toBeGreaterThanOrEqual(0);
    const [code] = await once(run.child, 'exit');
    expect(code, run.output()).toBe(0);

    const plain = spawnShoal(['replay', stream, '--metrics', target, '--pace', '10000']);
    await eventually(async () => (await fetchText(`http://${target}/readyz`)).status === 200, 'shoal ready');
    expect((await fetchText(`http://${target}/metrics`)).body).not.toMatch(/^shoal_checkpoint_age_seconds /m);
    await once(plain.child, 'exit');
  });
});
