/**
 * Dependency direction for Shoal (see DEVELOPERS.md, "Layers"):
 *   core -> learners, drift -> ensembles -> pipeline -> kafka, telemetry, report -> cli
 *   core -> evaluation, streams, frames -> pipeline
 * A lower layer never imports a higher one, model code never imports the pipeline,
 * and the pipeline never imports kafkajs, prom-client, Arrow or an HTTP server.
 */
const layer = (name, allowed) => ({
  name: `${name}-imports-only-lower-layers`,
  severity: 'error',
  from: { path: `^src/${name}/` },
  to: { path: '^src/', pathNot: [`^src/${name}/`, ...allowed.map((a) => `^src/${a}/`)] },
});

module.exports = {
  forbidden: [
    { name: 'no-circular', severity: 'error', from: {}, to: { circular: true } },
    layer('core', []),
    layer('learners', ['core']),
    layer('drift', ['core']),
    layer('journal', ['core']),
    layer('ensembles', ['core', 'learners', 'drift', 'journal']),
    layer('evaluation', ['core']),
    layer('streams', ['core']),
    layer('frames', ['core']),
    layer('checkpoint', ['core']),
    layer('pipeline', [
      'core',
      'ensembles',
      'learners',
      'drift',
      'evaluation',
      'frames',
      'checkpoint',
      'streams',
      'journal',
    ]),
    layer('files', ['core', 'frames', 'journal', 'pipeline', 'checkpoint']),
    layer('report', ['core', 'evaluation', 'ensembles', 'journal']),
    {
      name: 'model-and-pipeline-stay-free-of-io-libraries',
      severity: 'error',
      from: { path: '^src/(core|learners|drift|ensembles|evaluation|streams|pipeline|checkpoint)/' },
      to: { path: 'node_modules/(kafkajs|prom-client|apache-arrow)/|^(node:)?(http|https|net)$' },
    },
    {
      name: 'no-orphans',
      severity: 'error',
      // Worker entry points are loaded by URL, not imported.
      from: { orphan: true, pathNot: ['\\.d\\.ts$', '^src/index\\.ts$', '-worker\\.ts$'] },
      to: {},
    },
  ],
  options: {
    doNotFollow: { path: 'node_modules' },
    tsPreCompilationDeps: true,
    tsConfig: { fileName: 'tsconfig.json' },
    enhancedResolveOptions: {
      exportsFields: ['exports'],
      conditionNames: ['import', 'require', 'node', 'default'],
    },
  },
};
