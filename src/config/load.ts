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

/** Applies NIGHTJAR_PORT and NIGHTJAR_DB to the raw object before validation, so bad values are reported by path. */
function applyEnvironment(raw: unknown, env: Environment): unknown {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) return raw;
  const obj = { ...(raw as Record<string, unknown>) };
  const serviceRaw = obj['service'];
  const service: Record<string, unknown> =
    typeof serviceRaw === 'object' && serviceRaw !== null && !Array.isArray(serviceRaw)
      ? { ...(serviceRaw as Record<string, unknown>) }
      : {};
  const port = env['NIGHTJAR_PORT'];
  if (port !== undefined && port !== '') service['port'] = /^\d+$/.test(port) ? Number(port) : port;
  const db = env['NIGHTJAR_DB'];
  if (db !== undefined && db !== '') service['databasePath'] = db;
  obj['service'] = service;
  return obj;
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
  const config = parseConfig(applyEnvironment(raw, env), full);
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
