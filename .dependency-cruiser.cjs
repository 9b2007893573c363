// @ts-check
// Dependency rules of rungchain (issue 17): one folder per stage in src/, each importing only the
// stages below it. Checked by `npm run lint:deps` (part of `npm test` and CI).
//
// Stage order, bottom to top. The first five are shared low-level folders; the rest follow the data
// path spec -> model -> basis -> operator -> solver -> ... -> output.
const STAGES = [
  'errors', // typed errors with exit codes
  'format', // numbers, tables, CSV, quoting: plain text helpers
  'simd', // WebAssembly SIMD arena and kernels
  'threads', // shared-memory thread teams, worker script locations
  'linalg', // dense symmetric eigensolver, vector kernels and their thread team
  'spec', // reading and validating the input file, all its sections, lab units
  'model', // couplings of the Hamiltonian built from a spec
  'basis', // many-body bases (pinned, Fock)
  'operator', // Hamiltonian as a matrix-free or stored operator, threaded products
  'solver', // Lanczos / dense lowest eigenpairs
  'symmetry', // symmetry group, sector bases, sector operators, solving in sectors
  'observables', // populations, itinerant observables, entanglement
  'point', // one spec -> one solved point (plan, memory estimate, record)
  'thermal', // thermal equilibrium: exact and finite-temperature Lanczos
  'spectrum', // linear-response spectra of a solved ground state (Lanczos continued fraction)
  'runs', // run folders on disk: manifest, records, locks, merging
  'scan', // scans: expanding points, tasks, worker pool, shards, batch scripts
  'dynamics', // time evolution and evolve runs
  'analysis', // peaks, fits, transitions
  'output', // summaries, side-by-side tables, traces, HTML report (output/report/)
  'demo', // the built-in demonstration
];

const escape = (s) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
const folder = (names) => `^src/(${names.map(escape).join('|')})/`;

/** One rule per stage: nothing in it may import a stage above it. */
const upStageRules = STAGES.slice(0, -1).map((stage, i) => ({
  name: `no-up-from-${stage}`,
  comment: `src/${stage}/ sits below ${STAGES.slice(i + 1).join(', ')}: it may not import them. Move the shared part down, or pass a callback.`,
  severity: 'error',
  from: { path: folder([stage]) },
  to: { path: folder(STAGES.slice(i + 1)) },
}));

/** @type {import('dependency-cruiser').IConfiguration} */
module.exports = {
  forbidden: [
    {
      name: 'no-circular',
      comment: 'Import circles make load order matter and hide which module owns what.',
      severity: 'error',
      from: { pathNot: '^tests/' },
      to: { circular: true },
    },
    ...upStageRules,
    {
      name: 'src-is-a-library',
      comment:
        'src/ never reaches into the command line, the worker entries, benchmarks or tests (CLI wording lives in bin/).',
      severity: 'error',
      from: { path: '^src/' },
      to: { path: '^(bin|workers|bench|tests)/' },
    },
    {
      name: 'src-only-in-stage-folders',
      comment: 'Every file of src/ lives in one stage folder; no loose files beside the folders.',
      severity: 'error',
      from: { path: `^src/[^/]+$` },
      to: {},
    },
    {
      name: 'unknown-stage-folder',
      comment: 'A new folder in src/ must be given its place in STAGES (.dependency-cruiser.cjs).',
      severity: 'error',
      from: { path: '^src/', pathNot: folder(STAGES) },
      to: {},
    },
    {
      name: 'bin-is-imported-by-nothing',
      comment: 'bin/ is the top: only bin/ itself (and tests) may import it.',
      severity: 'error',
      from: { pathNot: '^(bin|tests)/' },
      to: { path: '^bin/' },
    },
    {
      name: 'bin-commands-do-not-import-each-other',
      comment: 'What two commands share goes to bin/commands/shared.ts or below in src/.',
      severity: 'error',
      from: { path: '^bin/commands/([^/]+)\\.ts$' },
      to: { path: '^bin/commands/', pathNot: ['^bin/commands/shared\\.ts$', '^bin/commands/$1\\.ts$'] },
    },
    {
      name: 'workers-are-thin',
      comment:
        'A worker entry only hands its message to one function in src/: no bin, no other worker, no npm packages of its own.',
      severity: 'error',
      from: { path: '^workers/' },
      to: { pathNot: '^src/', dependencyTypesNot: ['core'] },
    },
    {
      name: 'nothing-imports-workers',
      comment: 'Workers are started by file location (threads/team.ts workerScript), never imported.',
      severity: 'error',
      from: { pathNot: '^tests/' },
      to: { path: '^workers/' },
    },
    {
      name: 'no-dev-dependencies-in-shipped-code',
      comment: 'src, bin and workers run on a user machine: only "dependencies" are installed there.',
      severity: 'error',
      from: { path: '^(src|bin|workers)/' },
      to: { dependencyTypes: ['npm-dev'] },
    },
    {
      name: 'not-to-unresolvable',
      severity: 'error',
      from: {},
      to: { couldNotResolve: true },
    },
    {
      name: 'no-orphans',
      comment: 'A module nothing imports is dead code (entry points excepted).',
      severity: 'warn',
      from: {
        orphan: true,
        pathNot: [
          '^bin/rungchain\\.ts$',
          '^workers/',
          '^bench/',
          '^tests/',
          '\\.d\\.ts$',
          '(^|/)\\.[^/]+\\.(c|m)?js$',
          '\\.config\\.ts$',
        ],
      },
      to: {},
    },
  ],
  options: {
    // npm packages are seen (for the dev-dependency rule) but not walked into.
    doNotFollow: { path: '(^|/)node_modules/' },
    exclude: { path: '^dist/' },
    // Type-only imports count: a type is as much a dependency on the stage that owns it.
    tsPreCompilationDeps: true,
    enhancedResolveOptions: {
      // NodeNext `import './x.js'` finds x.ts: dependency-cruiser tries .ts when the .js is missing.
      extensions: ['.ts', '.js', '.mjs', '.json'],
      exportsFields: ['exports'],
      conditionNames: ['import', 'require', 'node', 'default', 'types'],
      mainFields: ['module', 'main', 'types', 'typings'],
    },
    moduleSystems: ['es6', 'cjs'],
    reporterOptions: { text: { highlightFocused: true } },
  },
};
