import { mkdir, mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { setTimeout as sleep, setImmediate as yieldToLoop } from 'node:timers/promises';
import { configFingerprint, runCheckpoint } from '../checkpoint/index.js';
import { FileCheckpointStore } from '../files/index.js';
import { type Frame, FrameDecoder } from '../frames/index.js';
import type { JournalRecord } from '../journal/index.js';
import { LearningSession, modelConfig, resolveConfig } from '../pipeline/index.js';
import { renderReport } from '../report/index.js';
import {
  CLASSES,
  FREIGHT_DEFAULTS,
  FREIGHT_SCHEMA,
  FreightScenario,
  OPERATOR,
  SITES,
  scriptedChanges,
} from '../scenario/index.js';
import { parseListen, SessionTelemetry, TelemetryServer } from '../telemetry/index.js';
import { decimal, parse, text, whole } from './args.js';
import { DemoView } from './demo-view.js';
import { JournalOut } from './journal-out.js';
import { LabelQueue } from './label-queue.js';
import { LegBatches } from './leg-batches.js';
import { count, figure, type Terminal, table } from './terminal.js';
import { shoalVersion } from './version.js';

/** The demo's caution, printed with every run and written into its report. */
export const DEMO_CAUTION =
  "Scores are advisory: whether a load is accepted is decided by food-safety law, the operator's HACCP plan and the inspector, never by the score alone.";

const DEFAULT_ROWS = FREIGHT_DEFAULTS.length;
/** Legs scored per batch (a gate's worth of arrivals handed to the session at once). */
const BATCH = 200;
const CHECKPOINT_EVERY = 10_000;

export const DEMO_HELP = `shoal demo [options]

Run the invented refrigerated-freight scenario in-process through the live code path: each trailer leg
is scored at the arrival gate for the risk that its load is rejected at inspection; the inspection
result arrives 2–8 hours later (scenario time) and is joined by leg id to the prediction served for it;
the ensemble learns from it, its members' drift monitors watch, and drifting members are replaced.
The script: a stricter seafood rule, a slow heat wave, a sensor firmware update that reads 3–4 °C high
(the reefers hold their boxes that much colder), a new carrier that takes the cold-store pickups. Writes the run's journal, a checkpoint and an HTML report, and prints their paths.
No broker is needed.

Options:
  --rows N      legs to run (default ${count(DEFAULT_ROWS)}; the script plays out over them)
  --rate N      pace the run at N legs per second (default: as fast as it goes)
  --forever     run until interrupted (Ctrl-C); the script plays out over the first ${count(DEFAULT_ROWS)} legs
  --seed S      the scenario's and the ensemble's seed (default 7)
  --out DIR     where the journal, checkpoints and report go (default: a new folder under ${tmpdir()})
  --metrics HOST:PORT
                serve /metrics, /status, /healthz and /readyz there while the demo runs (default
                127.0.0.1:0, a free port; the address is printed)
Without a configuration: 10-member bagging of Hoeffding trees, each watched by ADWIN.

${DEMO_CAUTION}`;

export async function demo(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('demo', args, {
    rows: { type: 'string' },
    rate: { type: 'string' },
    forever: { type: 'boolean' },
    seed: { type: 'string' },
    out: { type: 'string' },
    metrics: { type: 'string' },
  });
  if (parsed.values.help) {
    terminal.out(`${DEMO_HELP}\n`);
    return 0;
  }
  const forever = parsed.values.forever === true;
  const given = whole(parsed, 'rows', 100);
  if (forever && given !== undefined) {
    terminal.err('shoal demo: --forever runs until interrupted; --rows is ignored\n');
  }
  const total = forever ? null : (given ?? DEFAULT_ROWS);
  const rate = decimal(parsed, 'rate');
  if (rate !== undefined && !(rate > 0)) {
    terminal.err(`shoal demo: --rate must be > 0, got ${rate}\n`);
    return 2;
  }
  const seed = text(parsed, 'seed') ?? '7';
  const outDir = text(parsed, 'out');
  const out = resolve(outDir ?? (await mkdtemp(join(tmpdir(), 'shoal-demo-'))));
  await mkdir(join(out, 'checkpoints'), { recursive: true });
  const paths = {
    journal: join(out, 'journal.ndjson'),
    checkpoints: join(out, 'checkpoints'),
    report: join(out, 'report.html'),
  };

  const config = resolveConfig({ seed, inputs: { label: 'rejected', id: 'leg_id' } }, 'demo');
  const scenario = new FreightScenario(seed, { length: total ?? DEFAULT_ROWS });
  let scenarioNow = scenario.options.start;
  const view = new DemoView(
    terminal,
    `Shoal demo — ${OPERATOR}: spoilage risk at the arrival gates of ${SITES.join(', ')}`,
    config.evaluation.window,
    Math.max(1000, Math.round((total ?? DEFAULT_ROWS) / 20)),
  );
  let telemetry: SessionTelemetry | null = null;
  const journal = new JournalOut(paths.journal, true, (r: JournalRecord) => {
    telemetry?.record(r);
    view.record(r);
  });
  const session = new LearningSession({
    config,
    source: `freight scenario, seed ${seed}`,
    journal,
    // Pending predictions age in scenario time: an inspection 6 hours later is 6 hours later.
    clock: { monotonic: () => terminal.now(), wall: () => Date.now(), event: () => scenarioNow },
    version: shoalVersion(),
    changes: scriptedChanges(scenario.options.length),
  });
  const decoder = new FrameDecoder(
    { label: 'rejected', id: 'leg_id', classes: [...CLASSES] },
    'freight scenario',
  );
  telemetry = SessionTelemetry.of(session, { checkpoints: true, wall: () => Date.now() });
  const endpoint = new TelemetryServer(telemetry, {
    ...parseListen(text(parsed, 'metrics') ?? '127.0.0.1:0', 'demo --metrics'),
    version: shoalVersion(),
    readiness: ['model'],
  });
  await endpoint.start();
  const base = `http://${endpoint.host}:${endpoint.port}`;
  const store = new FileCheckpointStore(paths.checkpoints);
  const fingerprint = configFingerprint(modelConfig(config));
  const checkpoint = async (): Promise<string> => {
    const where = await store.save(
      runCheckpoint(
        { decoder: decoder.snapshot(), session: session.snapshot(), labelTiming: 'scenario' },
        { shoal: shoalVersion(), fingerprint, createdAt: new Date().toISOString() },
      ),
    );
    telemetry?.checkpointed();
    return where;
  };
  const inspections = new LabelQueue('inspection results');
  const width = FREIGHT_SCHEMA.features.length;
  const values = new Float64Array(BATCH * width);
  const ids = new Array<string>(BATCH).fill('');
  const positions = new Int32Array(BATCH);
  const legs = new LegBatches(scenario, (index, what) => view.scripted(index, what));

  let stop = false;
  const interrupt = (): void => {
    stop = true;
  };
  process.once('SIGINT', interrupt);
  process.once('SIGTERM', interrupt);
  terminal.err(
    `${DEMO_CAUTION}\n\nmetrics  ${base}/metrics   status ${base}/status   (also /healthz, /readyz)\n\n`,
  );
  const started = terminal.now();
  let produced = 0;
  let nextCheckpoint = CHECKPOINT_EVERY;
  let lastCheckpoint = '';
  try {
    while (!stop && (total === null || produced < total)) {
      const rows = total === null ? BATCH : Math.min(BATCH, total - produced);
      legs.fill(rows, values, ids, inspections, positions);
      scenarioNow = scenario.leg.time;
      const frame: Frame = {
        schema: FREIGHT_SCHEMA,
        rows,
        width,
        values,
        labels: null,
        ids,
        origin: { source: 'freight scenario', unit: 'row', batch: -1, positions },
      };
      const before = terminal.now();
      session.score(frame, CLASSES);
      endpoint.batch(rows, (terminal.now() - before) / 1000);
      endpoint.setReady('model', true);
      await inspections.release(scenarioNow, session, CLASSES);
      produced += rows;
      session.advance('freight scenario', BigInt(produced));
      view.update(
        { produced, total, scenarioTime: scenarioNow, labelsOut: inspections.length },
        session.metrics,
      );
      await journal.flush();
      if (produced >= nextCheckpoint) {
        lastCheckpoint = await checkpoint();
        nextCheckpoint += CHECKPOINT_EVERY;
      }
      if (rate !== undefined) {
        const ahead = (produced / rate) * 1000 - (terminal.now() - started);
        if (ahead > 0) await sleep(ahead);
      } else {
        await yieldToLoop();
      }
    }
    // The inspections still out come in as scenario time goes on after the last leg.
    scenarioNow = scenario.leg.time + scenario.options.labelHours[1] * 3_600_000;
    await inspections.release(scenarioNow, session, CLASSES);
    view.update(
      { produced, total, scenarioTime: scenarioNow, labelsOut: inspections.length },
      session.metrics,
      true,
    );
    lastCheckpoint = await checkpoint();
  } finally {
    process.off('SIGINT', interrupt);
    process.off('SIGTERM', interrupt);
    await endpoint.close();
  }
  const summary = session.finish(CLASSES);
  await journal.close();
  await writeFile(
    paths.report,
    renderReport(journal.kept, {
      title: `Shoal demo: ${OPERATOR}, spoilage risk at the gate (seed ${seed})`,
      caution: DEMO_CAUTION,
    }),
  );
  terminal.out(
    `\nshoal demo: ${count(produced)} legs, seed ${seed}\n\n${table([
      ['legs scored', count(summary.scored)],
      ['inspections joined', count(summary.labels.joined)],
      ['accuracy', figure(summary.accuracy)],
      ['kappa', figure(summary.kappa)],
      ['drift signals', count(summary.driftSignals)],
      ['replacements', count(summary.replacements)],
      ['input drifts', count(summary.inputDrifts)],
      ['rows/s', count(summary.rowsPerSecond)],
    ])}\njournal     ${paths.journal}\ncheckpoint  ${lastCheckpoint}\nreport      ${paths.report}\n\n${DEMO_CAUTION}\n`,
  );
  return 0;
}
