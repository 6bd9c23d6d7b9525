import { readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { configSchema, type Config } from './schema.js';
import { toValidationIssues, type ValidationIssue } from './issues.js';

/** The project root (one level above src/ or dist/). */
export const PROJECT_ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const DEFAULT_CONFIG_PATH = resolve(PROJECT_ROOT, 'config', 'default.json');
export const DEMO_NOTICES_DIR = resolve(PROJECT_ROOT, 'config', 'demo', 'notices');
export const MIGRATIONS_DIR = resolve(PROJECT_ROOT, 'migrations');

/** A configuration that failed validation; `issues` names every problem by path. */
export class ConfigError extends Error {
  readonly issues: ValidationIssue[];
  readonly source: string;
  constructor(source: string, issues: ValidationIssue[]) {
    super(`invalid configuration in ${source}:\n${issues.map((i) => `  ${i.path}: ${i.message}`).join('\n')}`);
    this.name = 'ConfigError';
    this.issues = issues;
    this.source = source;
  }
}

export type Environment = Readonly<Record<string, string | undefined>>;

/** Validates an already-parsed configuration object. Throws ConfigError listing every problem. */
export function parseConfig(raw: unknown, source = '(inline)'): Config {
  const result = configSchema.safeParse(raw);
  if (!result.success) throw new ConfigError(source, toValidationIssues(result.error));
  return result.data;
}

/** The environment variables that override a configuration field, by the field's path. */
export const ENVIRONMENT_OVERRIDES: Readonly<Record<string, string>> = { 'service.port': 'NIGHTJAR_PORT', 'service.databasePath': 'NIGHTJAR_DB' };

/**
 * Applies NIGHTJAR_PORT and NIGHTJAR_DB to the raw object before validation, so
 * bad values are checked by the same rules; `overridden` lists the paths whose
 * value came from the environment, so a problem there names the variable.
 */
function applyEnvironment(raw: unknown, env: Environment): { raw: unknown; overridden: string[] } {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) return { raw, overridden: [] };
  const obj = { ...(raw as Record<string, unknown>) };
  const serviceRaw = obj['service'];
  const service: Record<string, unknown> =
    typeof serviceRaw === 'object' && serviceRaw !== null && !Array.isArray(serviceRaw)
      ? { ...(serviceRaw as Record<string, unknown>) }
      : {};
  const overridden: string[] = [];
  const port = env['NIGHTJAR_PORT'];
  if (port !== undefined && port !== '') {
    service['port'] = /^\d+$/.test(port) ? Number(port) : port;
    overridden.push('service.port');
  }
  const db = env['NIGHTJAR_DB'];
  if (db !== undefined && db !== '') {
    service['databasePath'] = db;
    overridden.push('service.databasePath');
  }
  obj['service'] = service;
  return { raw: obj, overridden };
}

/**
 * Loads the configuration: `path`, else NIGHTJAR_CONFIG, else the embedded demo
 * (config/default.json). NIGHTJAR_PORT and NIGHTJAR_DB override the file.
 * Relative paths in the service block are resolved against `cwd`.
 */
export function loadConfig(options: { path?: string | undefined; env?: Environment; cwd?: string } = {}): Config {
  const env = options.env ?? process.env;
  const cwd = options.cwd ?? process.cwd();
  const envPath = env['NIGHTJAR_CONFIG'];
  const path = options.path ?? (envPath !== undefined && envPath !== '' ? envPath : DEFAULT_CONFIG_PATH);
  const full = resolve(cwd, path);
  let text: string;
  try {
    text = readFileSync(full, 'utf8');
  } catch (err) {
    throw new ConfigError(full, [{ path: '(file)', message: `cannot read: ${(err as Error).message}` }]);
  }
  let raw: unknown;
  try {
    raw = JSON.parse(text.replace(/^\uFEFF/, ''));
  } catch (err) {
    throw new ConfigError(full, [{ path: '(file)', message: `not valid JSON: ${(err as Error).message}` }]);
  }
  const applied = applyEnvironment(raw, env);
  let config: Config;
  try {
    config = parseConfig(applied.raw, full);
  } catch (err) {
    if (!(err instanceof ConfigError) || !err.issues.some((i) => applied.overridden.includes(i.path))) throw err;
    // A bad value that came from the environment is the variable's fault, not the file's.
    const fromEnv = err.issues.filter((i) => applied.overridden.includes(i.path));
    const fromFile = err.issues.filter((i) => !applied.overridden.includes(i.path));
    const named = fromEnv.map((i) => {
      const variable = ENVIRONMENT_OVERRIDES[i.path]!;
      return { path: `${variable}=${env[variable] ?? ''} (the environment, in place of ${i.path})`, message: i.message };
    });
    const sources = [fromFile.length > 0 ? full : null, ...fromEnv.map((i) => `the environment variable ${ENVIRONMENT_OVERRIDES[i.path]!}`)].filter((x): x is string => x !== null);
    throw new ConfigError(sources.join(' and '), [...named, ...fromFile]);
  }
  const service = config.service;
  return {
    ...config,
    service: {
      ...service,
      databasePath: service.databasePath === ':memory:' ? service.databasePath : resolve(cwd, service.databasePath),
      inbox: { ...service.inbox, path: resolve(cwd, service.inbox.path) },
    },
  };
}
