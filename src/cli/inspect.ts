import { stat } from 'node:fs/promises';
import type { RunCheckpoint } from '../checkpoint/index.js';
import { ShoalError } from '../core/index.js';
import type { EnsembleSnapshot } from '../ensembles/index.js';
import { FileCheckpointStore, readCheckpointFile } from '../files/index.js';
import type { FrameDecoderSnapshot } from '../frames/index.js';
import type { ViewFigures } from '../journal/index.js';
import { restoreClassifier } from '../learners/index.js';
import { restoreModel, restoreScorecard, type SessionSnapshot } from '../pipeline/index.js';
import { parse, positionals } from './args.js';
import { count, figure, type Terminal } from './terminal.js';

export const INSPECT_HELP = `shoal inspect CHECKPOINT [--json]

Summarise a run checkpoint written by shoal replay --checkpoint: when and by which build it was
written, the configuration's fingerprint, rows scored and trained, where each source resumes,
predictions waiting for a label, the evaluation window, and for every seat its member, state, age,
recent accuracy, the monitor's error estimate and the size of its model.
CHECKPOINT is a checkpoint file, or a checkpoint directory (its newest good checkpoint is read; newer
ones that are damaged are named with the reason).

Options:
  --json   print one JSON object instead of the summary`;

/** One seat as a checkpoint holds it. */
export interface SeatSummary {
  readonly seat: number;
  readonly member: number;
  readonly learner: string;
  readonly state: string;
  readonly age: number;
  readonly recentAccuracy: number;
  readonly errorEstimate: number;
  readonly understudy: boolean;
  /** Node count, leaves and depth of a tree member; null for other learners. */
  readonly tree: { readonly nodes: number; readonly leaves: number; readonly depth: number } | null;
  readonly bytes: number;
}

export interface CheckpointSummary {
  readonly file: string;
  /** Newer checkpoints of the directory that were refused, with where and why. */
  readonly refused: readonly string[];
  readonly formatVersion: number;
  readonly shoal: string;
  readonly createdAt: string;
  readonly fingerprint: string;
  readonly ensemble: string | null;
  readonly seed: string;
  readonly classes: readonly string[];
  readonly scored: number;
  readonly trained: number;
  readonly judged: number;
  readonly epoch: number;
  readonly positions: Readonly<Record<string, string>>;
  readonly pending: { readonly waiting: number; readonly capacity: number } | null;
  /** Labels that came before their events, held for them (null in a snapshot older than version 4). */
  readonly early: { readonly waiting: number; readonly capacity: number } | null;
  /** The evaluation window: accuracy and κ of a classification, RMSE and MAE of a regression. */
  readonly window: {
    readonly accuracy: number | null;
    readonly kappa: number | null;
    readonly rmse: number | null;
    readonly mae: number | null;
  };
  readonly seats: readonly SeatSummary[];
}

export async function inspect(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('inspect', args, { json: { type: 'boolean' } });
  if (parsed.values.help) {
    terminal.out(`${INSPECT_HELP}\n`);
    return 0;
  }
  const [path] = positionals('inspect', parsed, ['CHECKPOINT']);
  const { file, checkpoint, refused } = await load(path!);
  const summary = summarizeCheckpoint(checkpoint, file, refused);
  terminal.out(parsed.values.json === true ? `${JSON.stringify(summary)}\n` : render(summary));
  return 0;
}

async function load(
  path: string,
): Promise<{ file: string; checkpoint: RunCheckpoint; refused: readonly string[] }> {
  let directory: boolean;
  try {
    directory = (await stat(path)).isDirectory();
  } catch (e) {
    throw new ShoalError('not-found', `${path}: no such checkpoint file or directory`, { cause: e });
  }
  if (!directory) return { file: path, checkpoint: await readCheckpointFile(path), refused: [] };
  const stored = await new FileCheckpointStore(path).latest();
  if (stored === null) throw new ShoalError('not-found', `${path}: holds no checkpoint`);
  return { file: stored.where, checkpoint: stored.checkpoint, refused: stored.refused };
}

/** What a checkpoint says about its run, read without running anything. */
export function summarizeCheckpoint(
  checkpoint: RunCheckpoint,
  file: string,
  refused: readonly string[] = [],
): CheckpointSummary {
  const { state } = checkpoint;
  const session = state.session as SessionSnapshot;
  const decoder = state.decoder as FrameDecoderSnapshot;
  const { task } = session.config;
  const scorecard = restoreScorecard(task, session.evaluator);
  const judged = session.counts.judged;
  const ensemble = session.ensemble === null ? null : restoreModel(task, session.ensemble, () => {});
  const seats: SeatSummary[] = (ensemble?.seats() ?? []).map((view, i) => {
    // Only a classification ensemble has seats.
    const member = restoreClassifier((session.ensemble as EnsembleSnapshot).lifecycle.seats[i]!.member);
    const shape = (member as { shape?: NonNullable<SeatSummary['tree']> }).shape;
    return {
      seat: view.seat,
      member: view.member,
      learner: view.kind,
      state: view.state,
      age: view.age,
      recentAccuracy: view.recentAccuracy,
      errorEstimate: view.errorEstimate,
      understudy: view.understudy,
      tree: shape === undefined ? null : { nodes: shape.nodes, leaves: shape.leaves, depth: shape.depth },
      bytes: member.sizeBytes(),
    };
  });
  return {
    file,
    refused,
    formatVersion: checkpoint.version,
    shoal: state.shoal,
    createdAt: state.createdAt,
    fingerprint: state.fingerprint,
    ensemble: session.ensemble?.kind ?? null,
    seed: String(session.config.seed),
    classes: decoder.state.classes,
    scored: session.counts.scored,
    trained: session.counts.trained,
    judged,
    epoch: ensemble?.epoch ?? 0,
    positions: session.positions,
    pending:
      session.pending === null
        ? null
        : { waiting: session.pending.ids.length, capacity: session.pending.capacity },
    early:
      session.version < 4 ? null : { waiting: session.early.ids.length, capacity: session.early.capacity },
    window:
      judged > 0 ? windowOf(scorecard.windowed()) : { accuracy: null, kappa: null, rmse: null, mae: null },
    seats,
  };
}

function windowOf(f: ViewFigures): CheckpointSummary['window'] {
  return { accuracy: f.accuracy, kappa: f.kappa, rmse: f.rmse, mae: f.mae };
}

function render(s: CheckpointSummary): string {
  const lines: string[] = [];
  for (const r of s.refused) lines.push(`refused ${r}`);
  if (s.refused.length > 0) lines.push('');
  lines.push(`checkpoint ${s.file}`);
  const facts: [string, string][] = [
    ['written', `${s.createdAt} by shoal ${s.shoal} (checkpoint format ${s.formatVersion})`],
    [
      'configuration',
      `fingerprint ${s.fingerprint.slice(0, 16)}…, ${s.ensemble ?? 'no ensemble yet'}, seed ${s.seed}`,
    ],
    ['classes', s.classes.length > 0 ? s.classes.join(', ') : '–'],
    ['rows', `${count(s.scored)} scored, ${count(s.trained)} trained, ${count(s.judged)} judged`],
    ['replacements', count(s.epoch)],
    [
      'pending labels',
      s.pending === null
        ? '–'
        : `${count(s.pending.waiting)} waiting (room for ${count(s.pending.capacity)})`,
    ],
    [
      'early labels',
      s.early === null ? '–' : `${count(s.early.waiting)} waiting (room for ${count(s.early.capacity)})`,
    ],
    [
      'recent window',
      s.window.rmse !== null
        ? `RMSE ${figure(s.window.rmse)}, MAE ${figure(s.window.mae)}`
        : `accuracy ${figure(s.window.accuracy)}, kappa ${figure(s.window.kappa)}`,
    ],
  ];
  for (const [stream, next] of Object.entries(s.positions))
    facts.push(['resumes', `${stream} at ${BigInt(next).toLocaleString('en-US')}`]);
  const wide = Math.max(...facts.map((f) => f[0].length));
  for (const [k, v] of facts) lines.push(`  ${k.padEnd(wide)}  ${v}`);
  if (s.seats.length > 0) {
    lines.push('');
    const head = ['seat', 'member', 'learner', 'state', 'age', 'recent acc.', 'error est.', 'model'];
    const rows = s.seats.map((t) => [
      String(t.seat),
      String(t.member),
      t.learner,
      t.understudy ? `${t.state}+understudy` : t.state,
      count(t.age),
      figure(t.recentAccuracy, 3),
      figure(t.errorEstimate, 3),
      t.tree === null
        ? `${count(t.bytes / 1024)} KiB`
        : `${count(t.tree.nodes)} nodes, depth ${t.tree.depth}`,
    ]);
    const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
    const right = new Set([0, 1, 4, 5, 6]);
    const line = (cells: readonly string[]): string =>
      `  ${cells.map((c, i) => (right.has(i) ? c.padStart(widths[i]!) : c.padEnd(widths[i]!))).join('  ')}`.trimEnd();
    lines.push(line(head), ...rows.map(line));
  }
  return `${lines.join('\n')}\n`;
}
