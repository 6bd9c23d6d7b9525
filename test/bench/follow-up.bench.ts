/**
 * How follow-up positions shrink the uncertainty of a newly found object.
 * Run: npx tsx test/bench/follow-up.bench.ts [cases per kind] [members]   (default 10, 1000)
 *
 * Cases come from the reference generator (test/reference/: invented truths integrated by its own
 * Bulirsch-Stoer over astronomy-engine's bodies, observed from an invented survey site): its close
 * encounters ('encounter' and 'slow' populations) and its ordinary objects.
 * One hour after the discovery tracklet's last position, an invented follow-up site one hour of
 * longitude west of the survey site (so at about the same local time, in darkness) measures 1, 2 or
 * 3 positions 5 minutes apart with 0.3 arcsec Gaussian noise (the truth seen from there, light-time
 * corrected). Each tracklet is estimated as the service does (same estimator, default prior, seed
 * from the object id). Cases where the follow-up site would be in twilight or the object below
 * 20 deg are left out and counted.
 * Prints, for discovery only and for 1, 2, 3 follow-up positions:
 *   - the 3-sigma region (3 x the 1-sigma major axis) seen from the follow-up site 6 h and 24 h after
 *     discovery, median over the cases and median ratio to discovery only, and the fraction of
 *     truths inside the 3-sigma ellipse;
 *   - the range interval: topocentric distance from the survey site at the discovery tracklet's mean
 *     time over the virtual orbits, 0.135-99.865 % (the 3-sigma equivalent), median width and ratio,
 *     and the fraction of truths inside it.
 */
import type { GeodeticLocation } from '../../src/config/schema.js';
import { ensemblePlaces } from '../../src/orbit/ephemeris.js';
import type { TrackletObservation } from '../../src/domain/tracklet.js';
import { seedForObject } from '../../src/orbit/estimate-types.js';
import { estimateObject } from '../../src/orbit/estimation/index.js';
import { createRandom } from '../../src/orbit/estimation/random.js';
import { ellipseDistanceSquared, offsetArcsec } from '../../src/orbit/estimation/sky-spread.js';
import { REFERENCE_SURVEY_SITE, referenceCases, referencePlacesFrom, type ReferenceCase } from '../reference/cases.js';
import { altitudes, type ReferenceSite } from '../reference/observe.js';
import { trackletOf } from '../orbit/estimation/reference-scorer.js';
import { quantile } from './quantile.js';

const perKind = Number(process.argv[2] ?? 10);
const members = Number(process.argv[3] ?? 1000);
/** Invented follow-up site: one hour of longitude west of the reference's survey site. */
const FOLLOW_REFERENCE_SITE: ReferenceSite = { name: 'follow-up (invented, one hour west)', latDeg: 20.5, lonDeg: REFERENCE_SURVEY_SITE.lonDeg - 15, heightM: 1200 };
const FOLLOW_SITE: GeodeticLocation = { latDeg: FOLLOW_REFERENCE_SITE.latDeg, lonDeg: FOLLOW_REFERENCE_SITE.lonDeg, heightM: FOLLOW_REFERENCE_SITE.heightM };
const SURVEY_SITE: GeodeticLocation = { latDeg: REFERENCE_SURVEY_SITE.latDeg, lonDeg: REFERENCE_SURVEY_SITE.lonDeg, heightM: REFERENCE_SURVEY_SITE.heightM };
const FOLLOW_AFTER_MIN = 60;
const FOLLOW_SPACING_MIN = 5;
const FOLLOW_SIGMA_ARCSEC = 0.3;
const HORIZONS_H = [6, 24];
const COUNTS = [0, 1, 2, 3];

interface Measure {
  region3SigmaArcsec: number[];
  insideRegion: boolean[];
  rangeWidthAu: number;
  insideRange: boolean;
  /** Positions the estimator's fit left out as outliers. */
  outliers: number;
}

type Case = ReferenceCase & { kind: 'close' | 'ordinary' };

/** Truth seen from the follow-up site (degrees, light-time corrected), by the reference's own integration. */
function truthFrom(c: Case, times: Date[]) {
  return referencePlacesFrom(c.population, Number(c.id.split('-')[1]), FOLLOW_REFERENCE_SITE, times.map((t) => t.getTime()));
}

function measure(c: Case, observations: TrackletObservation[], nowMs: number): Measure {
  const estimate = estimateObject({ objectId: c.id, observations, now: new Date(nowMs), members, seed: seedForObject(c.id) });
  const horizonTimes = HORIZONS_H.map((h) => new Date(c.lastObservationMs + h * 3_600_000));
  const rows = estimate.ephemeris(FOLLOW_SITE, horizonTimes);
  const truths = truthFrom(c, horizonTimes);
  const region3SigmaArcsec = rows.map((r) => 3 * (r.unc?.major ?? Number.NaN));
  const insideRegion = rows.map((r, k) => {
    const [east, north] = offsetArcsec(r.ra, r.dec, truths[k]!.raDeg, truths[k]!.decDeg);
    return r.unc !== null && ellipseDistanceSquared(r.unc, east, north) <= 9;
  });
  const meanMs = c.observations.reduce((s, o) => s + Date.parse(o.t), 0) / c.observations.length;
  const delta = Array.from(ensemblePlaces(estimate.virtualOrbits, SURVEY_SITE, [new Date(meanMs)]).deltaAu);
  const lo = quantile(delta, 0.00135);
  const hi = quantile(delta, 0.99865);
  const outliers = estimate.attributable?.residuals.filter((r) => r.outlier).length ?? 0;
  return { region3SigmaArcsec, insideRegion, rangeWidthAu: hi - lo, insideRange: c.meanEpochRangeAu >= lo && c.meanEpochRangeAu <= hi, outliers };
}

const t0 = performance.now();
const close = (p: 'encounter' | 'slow', n: number) => referenceCases(p, n, 1).map((c): Case => ({ ...c, kind: 'close' }));
const cases: Case[] = [...close('encounter', Math.ceil(perKind / 2)), ...close('slow', Math.floor(perKind / 2)), ...referenceCases('ordinary', perKind, 1).map((c): Case => ({ ...c, kind: 'ordinary' }))];
const results: { c: Case; byCount: Measure[] }[] = [];
let skipped = 0;
for (const c of cases) {
  const followMs = [0, 1, 2].map((k) => c.lastObservationMs + (FOLLOW_AFTER_MIN + k * FOLLOW_SPACING_MIN) * 60_000);
  const places = truthFrom(c, followMs.map((ms) => new Date(ms)));
  const observable = places.every((p, k) => {
    const a = altitudes(FOLLOW_REFERENCE_SITE, followMs[k]!, p.raDeg, p.decDeg);
    return a.objectDeg > 20 && a.sunDeg < -12;
  });
  if (!observable) {
    skipped += 1;
    continue;
  }
  const random = createRandom(seedForObject(`${c.id}-follow-up`));
  const follow: TrackletObservation[] = places.map((p, k) => {
    const dec = p.decDeg + (random.normal() * FOLLOW_SIGMA_ARCSEC) / 3600;
    const ra = p.raDeg + (random.normal() * FOLLOW_SIGMA_ARCSEC) / 3600 / Math.cos((p.decDeg * Math.PI) / 180);
    return { t: new Date(followMs[k]!).toISOString(), raDeg: (ra + 360) % 360, decDeg: dec, sigmaArcsec: FOLLOW_SIGMA_ARCSEC, mag: null, band: null, observer: FOLLOW_SITE };
  });
  const byCount = COUNTS.map((n) => measure(c, [...trackletOf(c), ...follow.slice(0, n)], n === 0 ? c.lastObservationMs + FOLLOW_AFTER_MIN * 60_000 : followMs[n - 1]!));
  results.push({ c, byCount });
}

const fmt = (x: number) => (x >= 100 ? x.toFixed(0) : x >= 10 ? x.toFixed(1) : x.toFixed(2));
const pct = (flags: boolean[]) => `${((100 * flags.filter(Boolean).length) / Math.max(1, flags.length)).toFixed(0)} %`;
console.log(`follow-up positions: ${results.length} cases (${cases.length} generated, ${skipped} not observable from the follow-up site 1 h later), ${members} virtual orbits`);
for (const group of ['all', 'close', 'ordinary'] as const) {
  const rs = results.filter((r) => group === 'all' || r.c.kind === group);
  if (rs.length === 0) continue;
  console.log(`\n${group} (${rs.length} cases)`);
  console.log(`| follow-up positions | ${HORIZONS_H.map((h) => `3-sigma region at +${h} h (median, ratio, truth inside)`).join(' | ')} | range interval 99.7 % (median width, ratio, truth inside) | cases with positions left out as outliers |`);
  console.log(`|---|${HORIZONS_H.map(() => '---|').join('')}---|---|`);
  COUNTS.forEach((n, j) => {
    const cells = HORIZONS_H.map((_, h) => {
      const region = rs.map((r) => r.byCount[j]!.region3SigmaArcsec[h]!);
      const ratio = rs.map((r) => r.byCount[j]!.region3SigmaArcsec[h]! / r.byCount[0]!.region3SigmaArcsec[h]!);
      return `${fmt(quantile(region, 0.5))}", x${quantile(ratio, 0.5).toFixed(3)}, ${pct(rs.map((r) => r.byCount[j]!.insideRegion[h]!))}`;
    });
    const width = rs.map((r) => r.byCount[j]!.rangeWidthAu);
    const widthRatio = rs.map((r) => r.byCount[j]!.rangeWidthAu / r.byCount[0]!.rangeWidthAu);
    const outliers = rs.filter((r) => r.byCount[j]!.outliers > 0).length;
    console.log(`| ${n === 0 ? 'none (discovery only)' : n} | ${cells.join(' | ')} | ${quantile(width, 0.5).toPrecision(3)} au, x${quantile(widthRatio, 0.5).toFixed(3)}, ${pct(rs.map((r) => r.byCount[j]!.insideRange))} | ${outliers} |`);
  });
}
console.log(`\nwall ${((performance.now() - t0) / 1000).toFixed(0)} s`);
