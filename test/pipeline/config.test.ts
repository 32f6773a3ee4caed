import { describe, expect, it } from 'vitest';
import { ConfigError } from '../../src/core/index.js';
import { ADWIN_DEFAULTS, DDM_DEFAULTS } from '../../src/drift/index.js';
import { BAGGING_DEFAULTS, LIFECYCLE_DEFAULTS } from '../../src/ensembles/index.js';
import {
  HOEFFDING_REGRESSION_TREE_DEFAULTS,
  HOEFFDING_TREE_DEFAULTS,
  MLP_DEFAULTS,
  NAIVE_BAYES_DEFAULTS,
} from '../../src/learners/index.js';
import { resolveConfig } from '../../src/pipeline/index.js';

function issuesOf(raw: unknown): string[] {
  try {
    resolveConfig(raw, 'shoal.yaml');
  } catch (e) {
    if (e instanceof ConfigError) return e.issues.map((i) => `${i.path}: ${i.message}`);
    throw e;
  }
  return [];
}

describe('resolveConfig', () => {
  it('fills every default in, so the journal records exactly what ran', () => {
    const config = resolveConfig({}, 'shoal.yaml');
    expect(config.seed).toBe('1');
    expect(config.ensemble).toMatchObject({
      kind: 'bagging',
      members: BAGGING_DEFAULTS.members,
      lambda: BAGGING_DEFAULTS.lambda,
    });
    expect((config.ensemble as { lifecycle: unknown }).lifecycle).toEqual({
      ...LIFECYCLE_DEFAULTS,
      detector: { kind: 'adwin', ...ADWIN_DEFAULTS },
    });
    expect((config.ensemble as { learners: unknown }).learners).toEqual([
      { kind: 'hoeffding-tree', ...HOEFFDING_TREE_DEFAULTS, hoeffdingDelta: 0.01 },
    ]);
    expect(config.evaluation).toEqual({ window: 1000, fading: 0.999, journalEvery: 1000 });
    expect(config.inputs).toMatchObject({ label: 'label', id: null, monitor: true });
  });

  it('a regression bags regressors with every default filled in; task and labelsAs imply each other', () => {
    const byTask = resolveConfig({ task: 'regression' }, 'shoal.yaml');
    expect(byTask.task).toBe('regression');
    expect(byTask.inputs.labelsAs).toBe('regression');
    expect(byTask.ensemble).toEqual({
      kind: 'bagging',
      members: 10,
      lambda: 1,
      learners: [{ kind: 'hoeffding-regression-tree', ...HOEFFDING_REGRESSION_TREE_DEFAULTS }],
    });
    const byLabels = resolveConfig({ inputs: { labelsAs: 'regression' } }, 'shoal.yaml');
    expect(byLabels.task).toBe('regression');
    expect(resolveConfig({}, 'shoal.yaml').task).toBe('classification');
  });

  it('reports every setting that does not fit a regression, by its path', () => {
    expect(
      issuesOf({
        task: 'regression',
        ensemble: {
          kind: 'stacking',
          members: 0,
          learners: [{ kind: 'hoeffding-tree' }, { kind: 'linear-regression', learningRate: -1 }],
          lifecycle: { detector: { kind: 'adwin' }, minAge: 10 },
        },
        inputs: { labelsAs: 'class-codes' },
      }),
    ).toEqual([
      'ensemble.kind: must be bagging for task regression (boosting and stacking combine class votes), got "stacking"',
      'ensemble.lifecycle.detector: a regression has no member lifecycle (its monitors judge 0/1 errors); remove it',
      'ensemble.lifecycle.minAge: a regression has no member lifecycle (its monitors judge 0/1 errors); remove it',
      'ensemble.members: must be an integer ≥ 1, got 0',
      'ensemble.learners[0].kind: must be one of hoeffding-regression-tree, linear-regression, got "hoeffding-tree"',
      'ensemble.learners[1].learningRate: must be a number > 0, got -1',
      'inputs.labelsAs: "class-codes" does not fit task regression: a regression reads its labels as numbers (regression), a classification as class-codes or class-names',
    ]);
    expect(issuesOf({ task: 'guess' })).toEqual([
      'task: must be one of classification, regression, got "guess"',
    ]);
  });

  it('keeps what the file says', () => {
    const config = resolveConfig(
      {
        seed: 7,
        ensemble: {
          kind: 'stacking',
          learners: [{ kind: 'naive-bayes' }, { kind: 'hoeffding-tree', depthLimit: 3 }],
          meta: { kind: 'mlp', hidden: 4 },
          holdout: 0.1,
        },
        evaluation: { window: 200 },
        inputs: { label: 'rejected', id: 'leg_id', monitor: false },
      },
      'shoal.yaml',
    );
    expect(config.seed).toBe('7');
    expect(config.ensemble).toMatchObject({ kind: 'stacking', holdout: 0.1 });
    // Each learner's, the meta-learner's and the detector's options are resolved in full.
    const e = config.ensemble as { learners: unknown; meta: unknown; lifecycle: { detector: unknown } };
    expect(e.learners).toEqual([
      { kind: 'naive-bayes', ...NAIVE_BAYES_DEFAULTS },
      { kind: 'hoeffding-tree', ...HOEFFDING_TREE_DEFAULTS, depthLimit: 3 },
    ]);
    expect(e.meta).toEqual({ kind: 'mlp', ...MLP_DEFAULTS, hidden: 4 });
    expect(e.lifecycle.detector).toEqual({ kind: 'adwin', ...ADWIN_DEFAULTS });
    const ddm = resolveConfig({ ensemble: { lifecycle: { detector: { kind: 'ddm' } } } }, 'shoal.yaml');
    expect((ddm.ensemble as { lifecycle: { detector: unknown } }).lifecycle.detector).toEqual({
      kind: 'ddm',
      ...DDM_DEFAULTS,
    });
    expect(config.evaluation.window).toBe(200);
    expect(config.inputs).toMatchObject({ label: 'rejected', id: 'leg_id', monitor: false });
  });

  it('reports ten different mistakes as ten issues in one run, each at its exact path with a code', () => {
    let error: ConfigError | null = null;
    try {
      resolveConfig(
        {
          ensemble: {
            members: 'ten',
            lambda: -1,
            vote: 'majority',
            learners: [{ kind: 'hoeffding-tree', checkInterval: 0 }, { kind: 'oracle' }],
            lifecycle: {
              warmup: -5,
              minAge: 1.5,
              detector: { kind: 'ddm', driftFactor: 1, warningFactor: 2 },
            },
          },
          evaluation: { fading: 2 },
          inputs: { features: [{ name: 'temp', kind: 'category' }] },
        },
        'shoal.yaml',
      );
    } catch (e) {
      error = e as ConfigError;
    }
    expect(error).toBeInstanceOf(ConfigError);
    expect(error!.issues.map((i) => [i.path, i.code])).toEqual([
      ['ensemble.members', 'wrong-type'],
      ['ensemble.lambda', 'out-of-range'],
      ['ensemble.vote', 'not-one-of'],
      ['ensemble.learners[0].checkInterval', 'out-of-range'],
      ['ensemble.learners[1].kind', 'not-one-of'],
      ['ensemble.lifecycle.warmup', 'out-of-range'],
      ['ensemble.lifecycle.minAge', 'not-an-integer'],
      ['ensemble.lifecycle.detector.driftFactor', 'conflict'],
      ['evaluation.fading', 'out-of-range'],
      ['inputs.features[0].kind', 'not-one-of'],
    ]);
    expect(error!.message).toMatch(
      /^shoal\.yaml: 10 problems\n {2}ensemble\.members: must be an integer ≥ 1, got "ten" \[wrong-type\]\n/,
    );
  });

  it('names the top level when the file is not a mapping', () => {
    expect(issuesOf([{ seed: 1 }])).toEqual([
      '(top level): a configuration is a mapping of seed, task, ensemble, evaluation, inputs and labels, got a list',
    ]);
  });

  it('holds early labels by default and names the labels setting that is wrong', () => {
    expect(resolveConfig({}, 'shoal.yaml').labels).toMatchObject({ early: 100_000, earlyWaitSeconds: 600 });
    expect(resolveConfig({ labels: { early: 0 } }, 'shoal.yaml').labels.early).toBe(0);
    expect(issuesOf({ labels: { early: -1, earlyWaitSeconds: 0 } })).toEqual([
      'labels.early: must be an integer ≥ 0, got -1',
      'labels.earlyWaitSeconds: must be a number > 0, got 0',
    ]);
    expect(issuesOf({ labels: { earlyWait: 5 } })[0]).toMatch(/^labels\.earlyWait: unknown setting/);
  });

  it('refuses a setting that belongs to another kind', () => {
    expect(issuesOf({ ensemble: { kind: 'boosting', lambda: 6 } })).toEqual([
      'ensemble.lambda: unknown setting; expected one of kind, learners, lifecycle, threads, members, maxRepeats',
    ]);
    expect(issuesOf({ ensemble: { learners: [{ kind: 'naive-bayes', k: 3 }] } })[0]).toMatch(
      /^ensemble\.learners\[0\]\.k: unknown setting/,
    );
  });
});
