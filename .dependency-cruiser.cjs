// Import rules for src/ and test/reference/, checked by `npm run lint` (depcruise src test).
// FLOORS is DEVELOPERS.md's import table ("may import") per src/ folder; each row becomes one
// rule that names the folder. A folder may always import its own files and the shared floors
// src/domain/ (the types the floors exchange) and src/stats/.
/** @type {Record<string, { may: string[]; typesOnly?: string[]; files?: string[] }>} */
const FLOORS = {
  config: { may: [] },
  sky: { may: [], typesOnly: ['config'] },
  // orbit uses photometry's H-G magnitude functions (and their input errors), nothing else of it.
  orbit: { may: ['sky'], typesOnly: ['config'], files: ['^src/photometry/(magnitudes|errors)\\.ts$'] },
  photometry: { may: ['sky'], typesOnly: ['config'] },
  planning: { may: ['orbit', 'sky', 'photometry'], typesOnly: ['config'] },
  intake: { may: ['config', 'store'] },
  store: { may: [] },
  api: { may: ['store', 'intake', 'orbit', 'sky', 'views', 'telemetry', 'config'] },
  views: { may: ['sky'], typesOnly: ['config'] },
  jobs: { may: ['intake', 'planning', 'orbit', 'store', 'telemetry'], typesOnly: ['config'] },
  telemetry: { may: [] },
  stats: { may: [] },
  domain: { may: [] },
};

/** Floors that everyone may import. */
const SHARED = ['domain', 'stats'];

/** The numeric floors and the shared ones: pure functions of their inputs and a clock, so no I/O and no service libraries. */
const PURE = ['sky', 'orbit', 'photometry', 'planning', 'stats', 'domain'];

const folders = (names) => `^src/(${names.join('|')})/`;

const floorRules = Object.entries(FLOORS).flatMap(([floor, rule]) => {
  const allowed = [floor, ...SHARED, ...rule.may, ...(rule.typesOnly ?? [])];
  const out = [
    {
      name: `${floor}-may-import-${[...rule.may, ...(rule.typesOnly ?? []).map((t) => `${t}-types`)].join('-') || 'nothing'}`,
      comment: `src/${floor}/ may import ${[...rule.may, ...(rule.typesOnly ?? []).map((t) => `${t} (types only)`), ...(rule.files ?? [])].join(', ') || 'no other folder'} and ${SHARED.map((s) => `src/${s}/`).join(', ')} (DEVELOPERS.md, "may import")`,
      severity: 'error',
      from: { path: `^src/${floor}/` },
      to: { path: '^src/', pathNot: [folders(allowed), ...(rule.files ?? [])] },
    },
  ];
  for (const t of rule.typesOnly ?? []) {
    out.push({
      name: `${floor}-imports-only-types-of-${t}`,
      comment: `src/${floor}/ may import src/${t}/'s types, not its code (DEVELOPERS.md, "may import")`,
      severity: 'error',
      from: { path: `^src/${floor}/` },
      to: { path: `^src/${t}/`, dependencyTypesNot: ['type-only'] },
    });
  }
  return out;
});

module.exports = {
  forbidden: [
    ...floorRules,
    {
      name: 'only-the-cli-imports-commands',
      comment: 'src/commands/ is the top: only src/cli.ts dispatches to it',
      severity: 'error',
      from: { path: '^src/', pathNot: ['^src/commands/', '^src/cli\\.ts$'] },
      to: { path: ['^src/commands/', '^src/cli\\.ts$'] },
    },
    {
      name: 'only-commands-start-the-server',
      comment: 'src/server.ts starts the process; only the serve command imports it',
      severity: 'error',
      from: { path: '^src/', pathNot: ['^src/commands/', '^src/cli\\.ts$'] },
      to: { path: '^src/server\\.ts$' },
    },
    {
      name: 'pure-floors-do-no-io',
      comment: `${PURE.join(', ')} are pure functions of their inputs and a clock: no files, network, threads, database, HTTP or logging (DEVELOPERS.md)`,
      severity: 'error',
      from: { path: folders(PURE) },
      to: {
        path: [
          '^(node:)?(fs|fs/promises|net|http|https|http2|tls|dgram|dns|child_process|cluster|worker_threads|readline)$',
          'node_modules/(better-sqlite3|fastify|@fastify|fastify-type-provider-zod|piscina|pino|node-cron|prom-client|close-with-grace|standardwebhooks)/',
        ],
      },
    },
    {
      name: 'source-imports-no-tests',
      comment: 'src/ never imports from test/',
      severity: 'error',
      from: { path: '^src/' },
      to: { path: '^test/' },
    },
    {
      name: 'reference-shares-no-code',
      comment:
        'test/reference/ is the reference the estimator is checked against, so it shares no code with it and imports nothing from src/ (the scorer that runs the estimator on its cases sits in test/orbit/estimation/)',
      severity: 'error',
      from: { path: '^test/reference/' },
      to: { path: '^src/' },
    },
    {
      name: 'not-to-unresolvable',
      comment: 'every import resolves (a rule cannot judge an import it cannot find)',
      severity: 'error',
      from: {},
      to: { couldNotResolve: true },
    },
  ],
  options: {
    doNotFollow: { path: 'node_modules' },
    // Type-only imports count: a floor that may not import another may not import its types either.
    tsPreCompilationDeps: true,
    // Resolves the `.js` suffixes of ESM imports to the .ts sources.
    tsConfig: { fileName: 'tsconfig.json' },
    enhancedResolveOptions: {
      exportsFields: ['exports'],
      conditionNames: ['import', 'require', 'node', 'default', 'types'],
      extensions: ['.ts', '.js', '.mjs', '.cjs', '.d.ts'],
    },
  },
};
