import { execFile } from 'node:child_process';
import { cp, mkdir, mkdtemp, readdir, rm, symlink, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { afterAll, describe, expect, it } from 'vitest';

const run = promisify(execFile);
const ROOT = join(import.meta.dirname, '..');

/**
 * Each probe is a file that breaks one rule of `.dependency-cruiser.cjs`; the rule it must trip is
 * named beside it (one rule, several node modules for the rule on I/O). The probes are written into a copy of src/ (so that tests running beside this one
 * never see them), dependency-cruiser runs on the copy with the project's configuration, and the copy
 * is deleted afterwards.
 */
const PROBES: readonly { readonly file: string; readonly text: string; readonly rule: string | null }[] = [
  ...['fs', 'worker_threads', 'child_process', 'http', 'net', 'tls'].map((mod, i) => {
    const folder = ['pipeline', 'ensembles', 'learners', 'drift', 'evaluation', 'frames'][i]!;
    return {
      file: `src/${folder}/probe-${mod}.ts`,
      text: `import * as m from 'node:${mod}';\nexport const probe = m;\n`,
      rule: 'model-and-session-code-does-no-io',
    };
  }),
  {
    file: 'src/pipeline/probe-kafkajs.ts',
    text: "import { Kafka } from 'kafkajs';\nexport const probe = Kafka;\n",
    rule: 'kafkajs-only-in-kafka',
  },
  {
    file: 'src/cli/probe-prom.ts',
    text: "import { Registry } from 'prom-client';\nexport const probe = Registry;\n",
    rule: 'prom-client-only-in-telemetry',
  },
  {
    file: 'src/report/probe-arrow.ts',
    text: "import { tableFromArrays } from 'apache-arrow';\nexport const probe = tableFromArrays;\n",
    rule: 'apache-arrow-only-in-frames-and-files',
  },
  {
    file: 'src/journal/probe-yaml.ts',
    text: "import { parse } from 'yaml';\nexport const probe = parse;\n",
    rule: 'journal-uses-only-its-listed-packages',
  },
  {
    file: 'src/frames/probe-missing.ts',
    text: "import { nothing } from './no-such-module.js';\nexport const probe = nothing;\n",
    rule: 'not-to-unresolvable',
  },
  {
    file: 'src/newfolder/probe.ts',
    text: "import { ShoalError } from '../core/index.js';\nexport const probe = ShoalError;\n",
    rule: 'no-unknown-folder',
  },
  {
    file: 'src/learners/probe-upwards.ts',
    text: "import { Bagging } from '../ensembles/index.js';\nexport const probe = Bagging;\n",
    rule: 'learners-imports-only-its-allowed-folders',
  },
  {
    file: 'src/cli/probe-deep.ts',
    text: "import { Bagging } from '../ensembles/bagging.js';\nexport const probe = Bagging;\n",
    rule: 'cross-folder-imports-go-through-index',
  },
  {
    file: 'src/journal/probe-cycle-a.ts',
    text: "import { b } from './probe-cycle-b.js';\nexport const a = (): number => b() + 1;\n",
    rule: 'no-circular',
  },
  {
    file: 'src/journal/probe-cycle-b.ts',
    text: "import { a } from './probe-cycle-a.js';\nexport const b = (): number => a() - 1;\n",
    // The other half of the cycle: dependency-cruiser reports a cycle once, from its first module.
    rule: null,
  },
];

interface Violation {
  readonly from: string;
  readonly to: string;
  readonly rule: { readonly name: string };
}

let copy: string | null = null;

afterAll(async () => {
  if (copy !== null) await rm(copy, { recursive: true, force: true });
});

/** A copy of the project's src/ and configuration, with node_modules linked package by package. */
async function projectCopy(): Promise<string> {
  const dir = await mkdtemp(join(tmpdir(), 'shoal-depcruise-'));
  copy = dir;
  await cp(join(ROOT, 'src'), join(dir, 'src'), { recursive: true });
  for (const file of ['.dependency-cruiser.cjs', 'tsconfig.json', 'package.json']) {
    await cp(join(ROOT, file), join(dir, file));
  }
  const modules = join(dir, 'node_modules');
  await mkdir(modules);
  for (const name of await readdir(join(ROOT, 'node_modules'))) {
    await symlink(join(ROOT, 'node_modules', name), join(modules, name));
  }
  // A package the probes name but this checkout may not have installed yet: a minimal one, so that
  // the rule about where it may be used is what trips, not resolution.
  const prom = join(modules, 'prom-client');
  if (!(await readdir(modules)).includes('prom-client')) {
    await mkdir(prom);
    await writeFile(
      join(prom, 'package.json'),
      '{"name":"prom-client","version":"0.0.0","main":"index.js"}\n',
    );
    await writeFile(join(prom, 'index.js'), 'exports.Registry = class {};\n');
  }
  return dir;
}

async function violations(dir: string): Promise<Violation[]> {
  const bin = join(ROOT, 'node_modules', 'dependency-cruiser', 'bin', 'dependency-cruise.mjs');
  const args = [bin, 'src', '--config', '.dependency-cruiser.cjs', '--output-type', 'json'];
  let stdout: string;
  try {
    ({ stdout } = await run(process.execPath, args, { cwd: dir, maxBuffer: 64 << 20 }));
  } catch (e) {
    // dependency-cruiser exits non-zero when it finds errors; its report is still on stdout.
    stdout = (e as { stdout?: string }).stdout ?? '';
    if (stdout === '') throw e;
  }
  return (JSON.parse(stdout) as { summary: { violations: Violation[] } }).summary.violations;
}

describe('the dependency rules', () => {
  // Several whole runs of dependency-cruiser over a copy of the project: slow on a shared machine.
  it('pass on the project as it is, and fail on a probe that breaks each rule', async () => {
    const dir = await projectCopy();
    expect(await violations(dir)).toEqual([]);
    for (const probe of PROBES) {
      await mkdir(join(dir, probe.file, '..'), { recursive: true });
      await writeFile(join(dir, probe.file), probe.text);
    }
    const found = await violations(dir);
    for (const probe of PROBES) {
      if (probe.rule === null) continue;
      const rules = found.filter((v) => v.from === probe.file).map((v) => v.rule.name);
      expect(rules, probe.file).toContain(probe.rule);
    }
    for (const probe of PROBES) await rm(join(dir, probe.file));
    await rm(join(dir, 'src', 'newfolder'), { recursive: true });
  }, 120_000);
});
