import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { buildApp } from '../src/api/app.js';
import { DEFAULT_CONFIG_PATH, MIGRATIONS_DIR, parseConfig } from '../src/config/load.js';
import type { Config } from '../src/config/schema.js';
import { createIntake } from '../src/intake/ingest.js';
import { openStore, type Store } from '../src/store/index.js';

/** A fixed clock for tests. */
export function fixedClock(iso: string): () => Date {
  const ms = Date.parse(iso);
  return () => new Date(ms);
}

export function tempDir(prefix = 'nightjar-test-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}

/** The demo configuration as a plain object, for tests to modify. */
export function demoConfigRaw(): Record<string, unknown> {
  return JSON.parse(readFileSync(DEFAULT_CONFIG_PATH, 'utf8')) as Record<string, unknown>;
}

export function demoConfig(overrides: (raw: Record<string, unknown>) => void = () => {}): Config {
  const raw = demoConfigRaw();
  overrides(raw);
  return parseConfig(raw);
}

/** The bearer tokens whose hashes the demo config holds. */
export const DEMO_TOKENS = {
  reader: 'nightjar-demo-reader-token',
  scheduler: 'nightjar-demo-scheduler-token',
  feeder: 'nightjar-demo-feeder-token',
  operator: 'nightjar-demo-operator-token',
} as const;

export function memoryStore(clock: () => Date = () => new Date()): Store {
  return openStore(':memory:', MIGRATIONS_DIR, clock);
}

/** Intake over a fresh in-memory store at a fixed time; `send` ingests one notice as JSON and gives its result. */
export function memoryIntake(iso: string) {
  const clock = fixedClock(iso);
  const store = memoryStore(clock);
  const intake = createIntake({ notices: store.notices, clock, futureToleranceMin: 5 });
  const send = (n: Record<string, unknown>) => intake.ingestJson(JSON.stringify(n), 'test')[0]!;
  return { store, intake, clock, send };
}

/** The app on a fresh in-memory database; close it in teardown. */
export async function buildTestApp(options: { clock?: () => Date; config?: Config } = {}) {
  const clock = options.clock ?? fixedClock('2027-03-04T06:00:00Z');
  const config = options.config ?? demoConfig();
  const store = memoryStore(clock);
  const app = await buildApp({ config, store, clock, migrationsDir: MIGRATIONS_DIR });
  return { app, store, clock, config };
}

/** The example notice of DESIGN.md, made valid: two observations 20 minutes apart. */
export function exampleNotice(overrides: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    format: 'nightjar.notice.v1',
    noticeId: 'ex-0001',
    objectId: 'ZX27A01',
    issuedAt: '2027-03-04T05:06:07Z',
    sender: 'Example Survey (invented)',
    observer: { lat: 19.5, lon: -155.2, height: 3000 },
    observations: [
      { t: '2027-03-04T04:12:33.120Z', ra: 151.23456, dec: -12.34567, sigma: 0.5, mag: 19.4, band: 'V' },
      { t: '2027-03-04T04:32:33.120Z', ra: 151.24456, dec: -12.34067, sigma: 0.5, mag: 19.5, band: 'V' },
    ],
    ...overrides,
  };
}
