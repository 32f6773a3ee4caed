/**
 * Shoal's dependency rules, default-deny (see DEVELOPERS.md, "Layers"). Every folder of src/ has the
 * list of folders it may import; a folder not listed here may import nothing, and a file in such a
 * folder is refused outright. Across folders, imports go through the target folder's index.ts.
 *
 *   core ─► learners, drift, journal ─► ensembles ─► parallel
 *   core ─► evaluation, streams, frames, checkpoint
 *   model folders + journal ─► pipeline (the session and its ports)
 *   pipeline ─► files, kafka, telemetry (adapters) ─► cli;  journal ─► report ─► cli
 *
 * Model and session code (the folders in MODEL) touches no file, socket, process or thread: node's fs,
 * worker_threads, child_process, http(s), net, tls and dgram are refused there, and so is any npm
 * package but the few listed for a folder. kafkajs lives only in kafka/, prom-client only in
 * telemetry/, apache-arrow only in frames/ (decoding bytes) and files/ (reading and writing files).
 */
const ALLOWED = {
  core: [],
  learners: ['core'],
  drift: ['core'],
  journal: ['core'],
  evaluation: ['core'],
  streams: ['core'],
  frames: ['core'],
  checkpoint: ['core'],
  ensembles: ['core', 'learners', 'drift', 'journal'],
  parallel: ['core', 'learners', 'drift', 'journal', 'ensembles'],
  pipeline: ['core', 'learners', 'drift', 'journal', 'ensembles', 'evaluation', 'frames', 'checkpoint'],
  files: ['core', 'frames', 'journal', 'pipeline', 'checkpoint'],
  kafka: ['core', 'frames', 'journal', 'pipeline', 'checkpoint'],
  telemetry: ['core', 'journal', 'ensembles', 'pipeline'],
  report: ['core', 'journal', 'evaluation'],
  cli: [
    'core',
    'learners',
    'drift',
    'journal',
    'ensembles',
    'parallel',
    'evaluation',
    'streams',
    'frames',
    'checkpoint',
    'pipeline',
    'files',
    'kafka',
    'telemetry',
    'report',
  ],
};

/** Folders of model and session code, and the npm packages each may use (none unless listed). */
const MODEL = {
  core: ['seedrandom'],
  learners: [],
  drift: ['@stdlib/stats-base-dists-chisquare-quantile'],
  journal: [],
  evaluation: [],
  streams: [],
  frames: ['apache-arrow'],
  checkpoint: [],
  ensembles: [],
  pipeline: [],
};

/** Where a few packages may be used at all. */
const ONLY_IN = {
  kafkajs: ['kafka'],
  'prom-client': ['telemetry'],
  'apache-arrow': ['frames', 'files'],
};

const FOLDERS = Object.keys(ALLOWED);
const IO_MODULES =
  '^(node:)?(fs|fs/promises|worker_threads|child_process|http|https|http2|net|tls|dgram|cluster)$';
const literal = (name) => name.replace(/[.*+?^${}()|[\]\\/]/g, '\\$&');

const folderRules = Object.entries(ALLOWED).map(([name, allowed]) => ({
  name: `${name}-imports-only-its-allowed-folders`,
  comment: `src/${name}/ may import only: ${allowed.join(', ') || 'nothing outside itself'}`,
  severity: 'error',
  from: { path: `^src/${name}/` },
  to: { path: '^src/', pathNot: [`^src/${name}/`, ...allowed.map((a) => `^src/${a}/`)] },
}));

const modelPackageRules = Object.entries(MODEL).map(([name, packages]) => ({
  name: `${name}-uses-only-its-listed-packages`,
  comment: `model code in src/${name}/ may use only the npm packages: ${packages.join(', ') || 'none'}`,
  severity: 'error',
  from: { path: `^src/${name}/` },
  to: {
    dependencyTypes: ['npm', 'npm-dev', 'npm-optional', 'npm-peer', 'npm-no-pkg', 'npm-unknown'],
    pathNot: packages.map((p) => `node_modules/${literal(p)}/`),
  },
}));

const onlyInRules = Object.entries(ONLY_IN).map(([pkg, folders]) => ({
  name: `${pkg}-only-in-${folders.join('-and-')}`,
  severity: 'error',
  from: { path: '^src/', pathNot: folders.map((f) => `^src/${f}/`) },
  to: { path: `node_modules/${literal(pkg)}/` },
}));

module.exports = {
  forbidden: [
    { name: 'no-circular', severity: 'error', from: {}, to: { circular: true } },
    {
      name: 'not-to-unresolvable',
      comment: 'every import resolves to a file or an installed package',
      severity: 'error',
      from: {},
      to: { couldNotResolve: true },
    },
    {
      name: 'no-unknown-folder',
      comment: `a folder of src/ must be given its allowed list here first (${FOLDERS.join(', ')})`,
      severity: 'error',
      from: { path: '^src/[^/]+/', pathNot: FOLDERS.map((f) => `^src/${f}/`) },
      to: {},
    },
    ...folderRules,
    {
      name: 'cross-folder-imports-go-through-index',
      comment: "another folder's modules are reached through its index.ts",
      severity: 'error',
      from: { path: '^src/([^/]+)/' },
      to: { path: '^src/([^/]+)/', pathNot: ['^src/$1/', '^src/[^/]+/index\\.ts$'] },
    },
    {
      name: 'model-and-session-code-does-no-io',
      comment: 'no files, sockets, processes or threads in model and session code',
      severity: 'error',
      from: { path: `^src/(${Object.keys(MODEL).join('|')})/` },
      to: { dependencyTypes: ['core'], path: IO_MODULES },
    },
    ...modelPackageRules,
    ...onlyInRules,
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
