import { chmod, mkdir, readdir, readFile, symlink, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { scratch, shoal } from '../support/cli.js';

async function stream(dir: string): Promise<{ file: string; bytes: Buffer }> {
  const file = join(dir, 'legs.csv');
  expect((await shoal('spawn', 'sea', '--rows', '2000', '--out', file)).code).toBe(0);
  return { file, bytes: await readFile(file) };
}

describe('outputs never destroy inputs or each other', () => {
  it('refuses every collision before reading the input, which keeps its bytes', async () => {
    const dir = await scratch();
    const { file, bytes } = await stream(dir);
    const link = join(dir, 'link.csv');
    await symlink(file, link);
    const journal = join(dir, 'run.ndjson');
    const cases: [string[], RegExp][] = [
      [['--journal', file], /--journal .*legs\.csv is the input FILE/],
      [['--rejects', file], /--rejects .*legs\.csv is the input FILE/],
      [['--report', file], /--report .*legs\.csv is the input FILE/],
      [['--report', link], /--report .*link\.csv is the input FILE/],
      [
        ['--journal', join(dir, '..', 'shoal-x', '..', dir.split('/').at(-1)!, 'legs.csv')],
        /is the input FILE/,
      ],
      [['--journal', journal, '--report', journal], /--report .*run\.ndjson is also --journal/],
    ];
    for (const [flags, message] of cases) {
      const r = await shoal('replay', file, ...flags);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(message);
      expect(r.out).toBe('');
      expect(Buffer.compare(await readFile(file), bytes)).toBe(0);
    }
    const config = join(dir, 'shoal.yaml');
    await writeFile(config, 'seed: 3\n');
    const onConfig = await shoal('replay', file, '--config', config, '--journal', config);
    expect(onConfig.err).toMatch(/--journal .*shoal\.yaml is the input --config/);
    expect(await readFile(config, 'utf8')).toBe('seed: 3\n');
  });

  it('shoal report refuses to write over its journal', async () => {
    const dir = await scratch();
    const { file } = await stream(dir);
    const journal = join(dir, 'run.ndjson');
    expect((await shoal('replay', file, '--journal', journal, '--members', '2')).code).toBe(0);
    const before = await readFile(journal);
    const r = await shoal('report', journal, '--out', journal);
    expect(r.code).toBe(2);
    expect(r.err).toBe(
      `shoal report: --out ${journal} is the input JOURNAL (${journal}): refusing to overwrite it; choose another path\n`,
    );
    expect(Buffer.compare(await readFile(journal), before)).toBe(0);
  });

  it('an unwritable output is refused before the run with a message, not a stack; nothing is left behind', async () => {
    const dir = await scratch();
    const { file } = await stream(dir);
    const locked = join(dir, 'locked');
    await mkdir(locked);
    await chmod(locked, 0o500);
    // root may write anywhere: there, a folder that does not exist stands in for one without permission.
    const root = process.getuid?.() === 0;
    const unwritable = (name: string) => (root ? join(dir, 'no-such-folder', name) : join(locked, name));
    for (const flag of ['--journal', '--rejects', '--report']) {
      const target = unwritable('out');
      const r = await shoal('replay', file, flag, target);
      expect(r.code).toBe(2);
      expect(r.err).toBe(
        `shoal replay: ${flag} ${target}: cannot write (${root ? 'its folder does not exist' : 'permission denied'})\n`,
      );
      expect(r.out).toBe('');
    }
    const journal = join(dir, 'j.ndjson');
    const failed = await shoal('replay', file, '--journal', journal, '--report', unwritable('r.html'));
    expect(failed.code).toBe(2);
    expect((await readdir(dir)).filter((n) => n.startsWith('.') || n === 'j.ndjson')).toEqual([]);
  });

  it('a finished run moves its outputs into place and leaves no temporary file', async () => {
    const dir = await scratch();
    const { file } = await stream(dir);
    const journal = join(dir, 'run.ndjson');
    const report = join(dir, 'run.html');
    const r = await shoal('replay', file, '--journal', journal, '--report', report, '--members', '2');
    expect(r.code).toBe(0);
    expect((await readdir(dir)).sort()).toEqual(['legs.csv', 'run.html', 'run.ndjson']);
  });
});
