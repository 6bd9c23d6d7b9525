/**
 * The calibration subset's cases, generated once by the reference generator
 * and kept in test/reference/fixtures/ so that `npm test` only runs the
 * estimator on them (generating 30 cases takes a minute or two). A test checks
 * that the file still equals what the generator gives.
 * Regenerate: npx tsx test/reference/fixture.ts
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { REFERENCE_POPULATIONS, referenceCases, type ReferenceCase } from './cases.js';

/** First seed of the subset: a seed range used for nothing else (chosen before any result on it was seen). */
export const FIXTURE_FIRST_SEED = 7001;
export const FIXTURE_CASES_PER_POPULATION = 10;
const FIXTURE_FILE = fileURLToPath(new URL('./fixtures/calibration-subset.json', import.meta.url));

export function generateFixture(): ReferenceCase[] {
  return REFERENCE_POPULATIONS.flatMap((p) => referenceCases(p, FIXTURE_CASES_PER_POPULATION, FIXTURE_FIRST_SEED));
}

export function loadFixture(): ReferenceCase[] {
  return JSON.parse(readFileSync(FIXTURE_FILE, 'utf8')) as ReferenceCase[];
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const cases = generateFixture();
  writeFileSync(FIXTURE_FILE, `${JSON.stringify(cases)}\n`);
  console.log(`wrote ${cases.length} cases to ${FIXTURE_FILE}`);
}
