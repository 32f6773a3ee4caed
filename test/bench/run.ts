import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { bench as core } from './core.js';
import { bench as decode } from './decode.js';
import { bench as drift } from './drift.js';
import { type BenchSection, machine } from './harness.js';
import { bench as learners } from './learners.js';
import { bench as memory } from './memory.js';
import { bench as parallel } from './parallel.js';
import { bench as restore } from './restore.js';
import { bench as serve } from './serve.js';

/**
 * `npm run bench [-- --quick] [-- --json]`: every benchmark section, printed as tables, or as one JSON
 * object whose keys are the sections. Figures and ratios in one output come from the same run.
 *
 * Each section runs in a process of its own (this file again, with `--section NAME`), so that what the
 * compiler learnt in one section — call sites that saw several learner kinds, say — does not slow the
 * next, and one section's heap does not weigh on another's memory figures.
 */
const SECTIONS = { learners, core, parallel, memory, drift, decode, serve, restore } as const;
type SectionName = keyof typeof SECTIONS;

const argv = process.argv.slice(2);
const quick = argv.includes('--quick');
const asJson = argv.includes('--json');
const sectionAt = argv.indexOf('--section');

if (sectionAt >= 0) {
  const name = argv[sectionAt + 1] as SectionName;
  const section: BenchSection = await SECTIONS[name]({ quick });
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
