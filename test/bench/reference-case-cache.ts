/**
 * Reference case sets for the benches, generated once (1-4 s a case) and kept in
 * $TMPDIR/nightjar-reference-cases-v<version>-<population>-<seed>-<count>.json;
 * delete those files to regenerate.
 */
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { referenceCases, type ReferenceCase, type ReferencePopulation } from '../reference/cases.js';

const GENERATOR_VERSION = 2;

export function cachedReferenceCases(population: ReferencePopulation, perPopulation: number, firstSeed: number): ReferenceCase[] {
  const file = join(tmpdir(), `nightjar-reference-cases-v${GENERATOR_VERSION}-${population}-${firstSeed}-${perPopulation}.json`);
  if (existsSync(file)) return JSON.parse(readFileSync(file, 'utf8')) as ReferenceCase[];
  const t0 = performance.now();
  const cases = referenceCases(population, perPopulation, firstSeed);
  console.log(`generated ${cases.length} ${population} cases in ${((performance.now() - t0) / 1000).toFixed(0)} s`);
  writeFileSync(file, JSON.stringify(cases));
  return cases;
}

/** Case sets written as `<count>@<first seed>,...` (e.g. 40@1,100@21001): [count, first seed] each, checked. */
export function caseSetsOf(list: string): [number, number][] {
  const sets = list.split(',').map((part) => part.split('@').map(Number) as [number, number]);
  for (const [count, seed] of sets) if (!(Number.isInteger(count) && count > 0 && Number.isInteger(seed))) throw new Error(`case set ${count}@${seed}: expected a whole count and first seed`);
  return sets;
}
