import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { scratch, shoal } from '../support/cli.js';

describe('configuration problems from the file and the command line, in one report', () => {
  it('names a flag as the flag and a file setting by its path, each once', async () => {
    const dir = await scratch();
    const data = join(dir, 'sea.csv');
    expect((await shoal('spawn', 'sea', '--rows', '500', '--out', data)).code).toBe(0);
    const config = join(dir, 'shoal.yaml');
    await writeFile(config, 'ensemble:\n  members: 0\n  lifecycle:\n    minAge: 1.5\n');
    const r = await shoal('replay', data, '--config', config, '--learner', 'oracle');
    expect(r.code).toBe(2);
    expect(r.err).toBe(
      [
        `shoal replay: ${config}: 3 problems`,
        '  ensemble.members: must be an integer ≥ 1, got 0 [out-of-range]',
        '  --learner: must be one of hoeffding-tree, naive-bayes, logistic, knn-window, linear-svm, mlp, got "oracle" [not-one-of]',
        '  ensemble.lifecycle.minAge: must be an integer ≥ 0, got 1.5 [not-an-integer]',
        '',
      ].join('\n'),
    );
  });
});
