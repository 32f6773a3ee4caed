import { ShoalError } from '../core/index.js';
import { DEMO_HELP, demo } from './demo.js';
import { DEMO_STREAM_HELP, demoStream } from './demo-stream.js';
import { INSPECT_HELP, inspect } from './inspect.js';
import { REPLAY_HELP, replay } from './replay.js';
import { REPORT_HELP, report } from './report.js';
import { SERVE_HELP, serve } from './serve.js';
import { SPAWN_HELP, spawn } from './spawn.js';
import { processTerminal, type Terminal } from './terminal.js';
import { shoalVersion } from './version.js';

const COMMANDS: Readonly<
  Record<string, { run: (args: readonly string[], t: Terminal) => Promise<number>; help: string }>
> = {
  demo: { run: demo, help: DEMO_HELP },
  'demo-stream': { run: demoStream, help: DEMO_STREAM_HELP },
  replay: { run: replay, help: REPLAY_HELP },
  spawn: { run: spawn, help: SPAWN_HELP },
  report: { run: report, help: REPORT_HELP },
  serve: { run: serve, help: SERVE_HELP },
  inspect: { run: inspect, help: INSPECT_HELP },
};

/** The stream-writing command's first name, kept for one release. */
const FORMER_SPAWN = 'synth';

const USAGE = `shoal — online ensembles that keep scoring while the world changes

Commands:
  shoal demo             the embedded demo: an invented cold-chain stream scored, joined with late
                         labels, drifting and healed, in-process (no broker); journal, checkpoint, report
  shoal demo-stream --brokers HOST:PORT
                         write the same invented stream to Kafka (legs and, later, inspection results)
                         for shoal serve to score (npm run demo:stream)
  shoal replay FILE      run a recorded stream through an ensemble, test-then-train, and summarise it
  shoal spawn GEN ...    write a published benchmark stream (SEA, STAGGER, Agrawal, LED, …) to a file
  shoal report JOURNAL   turn a run's journal into a self-contained HTML report
  shoal serve --config F score a Kafka events topic live: scores, dead letters, inline labels
  shoal inspect CHECKPOINT
                         summarise a run checkpoint: seats, states, ages, accuracy, positions

shoal COMMAND --help shows a command's options. Scores are advisory: keep a human in the loop.`;

/** Exit codes: 0 done, 2 bad input, configuration or usage (a message says what), 1 anything else. */
export async function main(args: readonly string[], terminal: Terminal = processTerminal): Promise<number> {
  const [name, ...rest] = args;
  const verbose = rest.includes('--verbose');
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    terminal.out(`${USAGE}\n`);
    return name === undefined ? 2 : 0;
  }
  if (name === '--version') {
    terminal.out(`${shoalVersion()}\n`);
    return 0;
  }
  if (name === FORMER_SPAWN) {
    terminal.err('shoal synth is now shoal spawn; the old name works in this release only (same options)\n');
    return main(['spawn', ...rest], terminal);
  }
  const command = COMMANDS[name];
  if (command === undefined) {
    terminal.err(`shoal: unknown command ${JSON.stringify(name)}\n\n${USAGE}\n`);
    return 2;
  }
  try {
    return await command.run(rest, terminal);
  } catch (e) {
    if (e instanceof ShoalError) {
      terminal.err(`shoal ${name}: ${e.message}\n${verbose && e.stack ? `${e.stack}\n` : ''}`);
      return 2;
    }
    terminal.err(
      `shoal ${name}: unexpected failure: ${(e as Error).message}\n${verbose ? `${(e as Error).stack}\n` : 'Run again with --verbose for the stack trace.\n'}`,
    );
    return 1;
  }
}
