import { bench as core } from './core.js';
import { bench as decode } from './decode.js';
import { bench as drift } from './drift.js';
import { type BenchSection, machine } from './harness.js';
import { bench as learners } from './learners.js';
import { bench as memory } from './memory.js';
import { bench as parallel } from './parallel.js';

/**
 * `npm run bench [-- --quick] [-- --json]`: every benchmark section, printed as tables, or as one JSON
 * object whose keys are the sections. Figures and ratios in one output come from the same run.
 */
const SECTIONS = { learners, core, parallel, memory, drift, decode } as const;

const args = new Set(process.argv.slice(2));
const quick = args.has('--quick');
const asJson = args.has('--json');
const m = machine();
const out: Record<string, unknown> = { machine: m, quick };
if (!asJson)
  console.log(`Shoal benchmarks${quick ? ' (quick)' : ''}: ${m.cores} cores (${m.cpu}), Node ${m.node}\n`);
for (const [key, run] of Object.entries(SECTIONS)) {
  const section: BenchSection = await run({ quick });
  out[key] = section.json;
  if (asJson) continue;
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
if (asJson) console.log(JSON.stringify(out));
