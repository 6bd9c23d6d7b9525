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

type Plain = Record<string, unknown>;
const isPlain = (v: unknown): v is Plain => typeof v === 'object' && v !== null && !Array.isArray(v);
function deepMerge(base: Plain, over: Plain): Plain {
  const out: Plain = { ...base };
  for (const [k, v] of Object.entries(over)) out[k] = isPlain(v) && isPlain(out[k]) ? deepMerge(out[k], v) : v;
  return out;
}

/**
 * A request plan of the shape the planner writes (`nightjar.request.v1`, the API's
 * plan schema), with invented values; `overrides` are merged in depth. For tests
 * that store requests without running the planner: answers are checked against
 * the schema on the way out.
 */
export function examplePlan(overrides: Plain = {}): Plain {
  const base: Plain = {
    format: 'nightjar.request.v1',
    objectId: 'ZX27A01',
    siteId: 'lantern-ridge',
    kind: 'photometry',
    plannedAtUtc: '2027-03-04T06:00:00.000Z',
    windowStartUtc: '2027-03-04T06:10:00.000Z',
    windowEndUtc: '2027-03-04T09:20:00.000Z',
    windowOpensBecause: 'altitude rises above 25 deg',
    windowClosesBecause: 'twilight',
    recommendedStartUtc: '2027-03-04T06:15:00.000Z',
    expectedDurationS: 1800,
    expiresAtUtc: '2027-03-04T09:20:00.000Z',
    target: { raDeg: 151.3, decDeg: -12.33, vMag: 19.4, vMagSigma: 0.3, uncertainty1Sigma: { majorArcsec: 2, minorArcsec: 1, paDeg: 0 }, region3SigmaAcrossArcsec: 6 },
    sequence: { steps: [{ filter: 'r', exposureS: 45, count: 30, expectedSnr: 25, snrPerExposure: 25, limitingFactor: 'sky-limited' }], notes: [] },
    tracking: { mode: 'non-sidereal', atUtc: '2027-03-04T06:15:00.000Z', raRateArcsecPerS: 0.52, decRateArcsecPerS: -0.11, totalRateArcsecPerS: 0.5315 },
    conditionsAtStart: { altitudeDeg: 40, airmass: 1.55, skyVMagPerArcsec2: 21.5, moonSeparationDeg: 90 },
    searchPattern: null,
    ephemeris: { stepMin: 5, frame: 'astrometric ICRS, topocentric', units: { ra: 'deg' }, rows: [] },
    score: { total: 60, factors: [] },
    assessment: {
      method: 'ranging',
      members: 1000,
      firstObservedAtUtc: '2027-03-04T05:10:00.000Z',
      hMagP50: 25.1,
      diameterM: { min: 20, max: 45 },
      nearEarthFraction: 0.9,
      closeApproach: true,
      minDistanceLunarP50: 3,
      notes: [],
    },
  };
  return deepMerge(base, overrides);
}
