import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { type BenchFn, type BenchSection, machine } from './harness.js';

/**
 * `npm run bench [-- --quick] [-- --json]`: every benchmark section, printed as tables, or as one JSON
 * object whose keys are the sections. Figures and ratios in one output come from the same run.
 *
 * Each section runs in a process of its own (this file again, with `--section NAME`), so that what the
 * compiler learnt in one section — call sites that saw several learner kinds, say — does not slow the
 * next, and one section's heap does not weigh on another's memory figures. A section's process loads
 * only that section's modules: with every section imported up front, the core section ran in a process
 * that had loaded Apache Arrow, kafkajs and the service, and the engine and its yardstick both ran
 * about a tenth slower there than in a process that had loaded only the core (alternated on 4 December;
 * see DEVELOPERS.md, *Performance work*).
 */
const SECTIONS: Record<string, () => Promise<BenchFn>> = {
  learners: async () => (await import('./learners.js')).bench,
  core: async () => (await import('./core.js')).bench,
  parallel: async () => (await import('./parallel.js')).bench,
  memory: async () => (await import('./memory.js')).bench,
  drift: async () => (await import('./drift.js')).bench,
  decode: async () => (await import('./decode.js')).bench,
  serve: async () => (await import('./serve.js')).bench,
  restore: async () => (await import('./restore.js')).bench,
};

const argv = process.argv.slice(2);
const quick = argv.includes('--quick');
const asJson = argv.includes('--json');
const sectionAt = argv.indexOf('--section');

if (sectionAt >= 0) {
  const name = argv[sectionAt + 1]!;
  const load = SECTIONS[name];
  if (load === undefined) {
    console.error(`no bench section ${name}: one of ${Object.keys(SECTIONS).join(', ')}`);
    process.exit(2);
  }
  const section: BenchSection = await (await load())({ quick });
  process.stdout.write(JSON.stringify(section));
} else {
  const m = machine();
  const out: Record<string, unknown> = { machine: m, quick };
  if (!asJson)
    console.log(
      `Shoal benchmarks${quick ? ' (quick)' : ''}: ${m.cores} cores (${m.cpu}, L2 ${m.l2} per core), Node ${m.node}\n`,
    );
  for (const name of Object.keys(SECTIONS)) {
    const child = spawnSync(
      process.execPath,
      [...process.execArgv, fileURLToPath(import.meta.url), '--section', name, ...(quick ? ['--quick'] : [])],
      { encoding: 'utf8', maxBuffer: 64 * 2 ** 20, stdio: ['ignore', 'pipe', 'inherit'] },
    );
    if (child.status !== 0) {
      console.error(`bench section ${name} failed (exit ${child.status ?? child.signal})`);
      process.exit(1);
    }
    const section = JSON.parse(child.stdout) as BenchSection;
    out[name] = section.json;
    if (!asJson) print(section);
  }
  if (asJson) console.log(JSON.stringify(out));
}

function print(section: BenchSection): void {
  console.log(section.title);
  for (const r of section.rows) {
    const rate = r.unit.startsWith('×') ? r.rate.toFixed(2) : Math.round(r.rate).toLocaleString('en-US');
    const parts = [`  ${r.name.padEnd(48)} ${rate.padStart(13)} ${r.unit}`];
    if (r.ofFloor !== undefined) parts.push(`${(r.ofFloor * 100).toFixed(2).padStart(7)}% of floor`);
    if (r.accuracy !== undefined) parts.push(`accuracy ${r.accuracy.toFixed(4)}`);
    if (r.note !== undefined) parts.push(r.note);
    console.log(parts.join('  '));
  }
  console.log('');
}
