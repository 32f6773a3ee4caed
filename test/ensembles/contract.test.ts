import type { EnsembleSpec } from '../../src/ensembles/index.js';
import { describeEnsembleContract } from '../support/ensemble-contract.js';

/**
 * Every ensemble kind through the one contract suite, with the member lifecycle on (a quick guard, so
 * that seats are replaced within the suite's short stream) and off. Members are small and few to keep
 * the suite quick; the code paths are those of the defaults.
 */
const lifecycle = { warmup: 50, minAge: 100, replacementWindow: 500, maxReplacements: 2 };
const kinds: readonly EnsembleSpec[] = [
  // Trees with a single tree's split confidence (Domingos & Hulten's δ = 1e-7) adapt slowly, so members
  // fall behind after each change and their understudies prove better: replacements happen in the run.
  { kind: 'bagging', members: 4, learners: [{ kind: 'hoeffding-tree', hoeffdingDelta: 1e-7 }] },
  { kind: 'bagging', members: 4, vote: 'weighted', lambda: 1 },
  { kind: 'boosting', members: 4 },
  {
    kind: 'stacking',
    learners: [{ kind: 'hoeffding-tree' }, { kind: 'naive-bayes' }, { kind: 'linear-svm' }],
    meta: { kind: 'mlp' },
    holdout: 0.1,
  },
];

for (const spec of kinds) {
  const name = `${spec.kind}${'vote' in spec ? ` (${spec.vote} vote, λ = ${spec.lambda})` : ''}`;
  describeEnsembleContract({ name: `${name} with the lifecycle`, spec: { ...spec, lifecycle } });
  describeEnsembleContract({
    name: `${name} without the lifecycle`,
    spec: { ...spec, lifecycle: { enabled: false } },
  });
}
