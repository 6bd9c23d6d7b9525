/**
 * Whether another centre or shape of the sky region would serve better than the estimator's
 * (the nominal, and the ellipse of sky-spread.ts), on reference cases, from the follow-up site.
 * Run: npx tsx test/bench/region-alternatives.bench.ts <population> [cases] [first seed] [hours]
 *   defaults 100 cases from seed 21001, +48 h; cases are kept in $TMPDIR like the calibration bench's.
 * Prints medians over the cases of:
 * - the 1-sigma major of the ellipse and the least 1-sigma major any region centred on the nominal can
 *   have while holding 98.89 % of the virtual orbits (a third of their 98.89 % distance quantile: a circle);
 * - the error of the nominal, of the densest virtual orbit on the sky (the most others within a fifth of
 *   the cloud's median distance from the nominal: a mode) and of the cloud's coordinate median, each with
 *   how many truths an ellipse centred there (same construction) holds inside 3 sigma.
 */
import { ensemblePlaces } from '../../src/orbit/ephemeris.js';
import { GAUSSIAN_3SIGMA_CONTENT_2D as CONTENT, skySpread } from '../../src/orbit/estimation/sky-spread.js';
import { REFERENCE_FOLLOW_UP_SITE, REFERENCE_POPULATIONS, type ReferencePopulation } from '../reference/cases.js';
import { median, runEstimate, sigmaDistance, tangentOffsetArcsec } from '../orbit/estimation/reference-scorer.js';
import { cachedReferenceCases } from './reference-case-cache.js';

const population = process.argv[2] as ReferencePopulation;
if (!REFERENCE_POPULATIONS.includes(population)) throw new Error(`population = ${process.argv[2]}: expected one of ${REFERENCE_POPULATIONS.join(', ')}`);
const count = Number(process.argv[3] ?? 100);
const firstSeed = Number(process.argv[4] ?? 21001);
const hours = Number(process.argv[5] ?? 48);
const site = { latDeg: REFERENCE_FOLLOW_UP_SITE.latDeg, lonDeg: REFERENCE_FOLLOW_UP_SITE.lonDeg, heightM: REFERENCE_FOLLOW_UP_SITE.heightM };
/** Neighbourhood of the mode, as a fraction of the cloud's median distance from the nominal. */
const MODE_RADIUS = 0.2;

type Centre = 'nominal' | 'mode' | 'median';
const majors: number[] = [], least: number[] = [];
const errors: Record<Centre, number[]> = { nominal: [], mode: [], median: [] };
const inside: Record<Centre, number> = { nominal: 0, mode: 0, median: 0 };
const cases = cachedReferenceCases(population, count, firstSeed);
for (const c of cases) {
  const estimate = runEstimate(c);
  const truth = c.truth.find((p) => p.site === 'followUp' && p.hours === hours);
  if (truth === undefined) throw new Error(`hours = ${hours}: not a reference horizon`);
  const places = ensemblePlaces([estimate.nominal, ...estimate.virtualOrbits], site, [new Date(c.lastObservationMs + hours * 3_600_000)]);
  const ra = Array.from(places.raDeg), dec = Array.from(places.decDeg);
  const offsets = ra.slice(1).map((r, k) => tangentOffsetArcsec(ra[0]!, dec[0]!, r, dec[k + 1]!));
  const distances = offsets.map(([e, n]) => Math.hypot(e, n));
  const sorted = [...distances].sort((a, b) => a - b);
  least.push(sorted[Math.ceil(CONTENT * sorted.length) - 1]! / 3);
  const radius = MODE_RADIUS * median(distances);
  let densest = 0, most = -1;
  for (let i = 0; i < offsets.length; i++) {
    let near = 0;
    for (const o of offsets) if (Math.hypot(offsets[i]![0] - o[0], offsets[i]![1] - o[1]) <= radius) near++;
    if (near > most) { most = near; densest = i; }
  }
  const eastMedian = median(offsets.map((o) => o[0])), northMedian = median(offsets.map((o) => o[1]));
  const centres: Record<Centre, [number, number]> = {
    nominal: [ra[0]!, dec[0]!],
    mode: [ra[densest + 1]!, dec[densest + 1]!],
    median: [ra[0]! + eastMedian / 3600 / Math.cos((dec[0]! * Math.PI) / 180), dec[0]! + northMedian / 3600],
  };
  for (const name of Object.keys(centres) as Centre[]) {
    const [cRa, cDec] = centres[name];
    const sigma = skySpread(cRa, cDec, ra, dec, 1, ra.length - 1).sigma;
    if (name === 'nominal') majors.push(sigma.major);
    const [e, n] = tangentOffsetArcsec(cRa, cDec, truth.raDeg, truth.decDeg);
    errors[name].push(Math.hypot(e, n));
    if (sigmaDistance(sigma, e, n) <= 3) inside[name]++;
  }
}
const f = (x: number): string => `${x.toFixed(0)}"`;
console.log(`${population}, ${cases.length} cases from seed ${firstSeed}, +${hours} h, follow-up site`);
console.log(`1-sigma major: ellipse ${f(median(majors))}, least possible for a region holding ${(100 * CONTENT).toFixed(2)} % about the nominal ${f(median(least))} (median per-case ratio ${median(majors.map((m, i) => m / least[i]!)).toFixed(2)})`);
for (const name of Object.keys(errors) as Centre[]) console.log(`centre ${name}: median error ${f(median(errors[name]))}, inside 3σ ${inside[name]} of ${cases.length}`);
