/**
 * The first look (a cheaper estimate under backlog) against the full estimate, on the
 * independent reference generator (test/reference/). Printed, never asserted.
 *
 * For each case, the full estimate (1000 virtual orbits) and the cheaper one are asked for the
 * 1-sigma ellipse from both reference sites at +1 ... +48 h after the last position. The cheaper
 * region must never be narrower: the factor it needs is the least f such that its ellipse, scaled
 * by f, holds the full estimate's 3-sigma ellipse (72 points of its edge, each nominal where it
 * is). Only ellipses a request could carry matter (a wider region gives no request: "needs
 * astrometry first"): those whose widened 1-sigma major axis is at most PLANNABLE_MAJOR_ARCSEC.
 * Run on tuning seeds to choose the factor, then on fresh seeds to check it; prints the factor
 * needed (median, p99, max over cases, horizons and sites; all and plannable), the time of each
 * estimate, and the plannable ellipses needing more than the factor checked.
 *
 *   [PROPOSALS=n] npx tsx test/bench/first-look.bench.ts [members] [cases per population] [first seed] [factor to check] [range nodes|-] [rate nodes] [hours]
 *   defaults FIRST_LOOK's members, 20, 9001, FIRST_LOOK's factor, the estimator's grid, FIRST_LOOK's horizon. Cases are kept in $TMPDIR like the calibration bench's.
 */
import { cpus, loadavg } from 'node:os';
import type { ShortArcEstimate } from '../../src/orbit/estimation/index.js';
import { FIRST_LOOK } from '../../src/planning/first-look.js';
import { REFERENCE_FOLLOW_UP_SITE, REFERENCE_HORIZONS_H, REFERENCE_POPULATIONS, REFERENCE_SURVEY_SITE, type ReferenceCase, type ReferencePopulation } from '../reference/cases.js';
import { runEstimate } from '../orbit/estimation/reference-scorer.js';
import { cachedReferenceCases } from './reference-case-cache.js';
import { quantile } from './quantile.js';
import { coverFactor, PLANNABLE_MAJOR_ARCSEC } from '../planning/region-cover.js';

const MEMBERS = Number(process.argv[2] ?? FIRST_LOOK.members);
const PER_POPULATION = Number(process.argv[3] ?? 20);
const FIRST_SEED = Number(process.argv[4] ?? 9001);
const CHECK = Number(process.argv[5] ?? FIRST_LOOK.widen);
/** Proposals of the cheaper estimate's sampling (FIRST_LOOK's; 0 for the default two per member). */
const PROPOSALS = Number(process.env.PROPOSALS ?? FIRST_LOOK.proposals);
const GRID = process.argv[6] === undefined || process.argv[6] === '-' ? {} : { rangeNodes: Number(process.argv[6]), rateNodes: Number(process.argv[7] ?? 10) };
/** Horizons a first look plans over (its requests lie within FIRST_LOOK.horizonH); later ones are printed but not counted as plannable. */
const MAX_HOURS = Number(process.argv[8] ?? FIRST_LOOK.horizonH);

const casesOf = (population: ReferencePopulation): ReferenceCase[] => cachedReferenceCases(population, PER_POPULATION, FIRST_SEED);

console.log(`first-look bench: ${MEMBERS} virtual orbits from ${PROPOSALS || 2 * MEMBERS} proposals${GRID.rangeNodes ? ` on a ${GRID.rangeNodes} x ${GRID.rateNodes} grid` : ''} against 1000, ${PER_POPULATION} cases per population from seed ${FIRST_SEED}; ${new Date().toISOString()}, load ${loadavg().map((x) => x.toFixed(2)).join(' ')}, ${cpus().length} cores`);
const sites = [REFERENCE_FOLLOW_UP_SITE, REFERENCE_SURVEY_SITE].map((s) => ({ latDeg: s.latDeg, lonDeg: s.lonDeg, heightM: s.heightM }));
const all: number[] = [];
const plannable: number[] = [];
const byHorizon = new Map<number, number>();
const timesFull: number[] = [], timesCheap: number[] = [];
const over: string[] = [];
for (const population of REFERENCE_POPULATIONS) {
  const factors: number[] = [];
  for (const c of casesOf(population)) {
    const times = REFERENCE_HORIZONS_H.map((h) => new Date(c.lastObservationMs + h * 3_600_000));
    const timed = (members: number, out: number[], ranging = {}): ShortArcEstimate => {
      const t0 = performance.now();
      const e = runEstimate(c, { members, seed: 1, ranging });
      out.push(performance.now() - t0);
      return e;
    };
    let full: ShortArcEstimate, cheap: ShortArcEstimate;
    try {
      full = timed(1000, timesFull);
      cheap = timed(MEMBERS, timesCheap, { ...GRID, proposals: PROPOSALS });
    } catch (err) {
      console.log(`  ${c.id}: no estimate (${(err as Error).message})`);
      continue;
    }
    const fullRows = full.ephemerisForSites(sites, times);
    const cheapRows = cheap.ephemerisForSites(sites, times);
    fullRows.forEach((rows, s) =>
      rows.forEach((row, k) => {
        const cheapRow = cheapRows[s]![k]!;
        const f = coverFactor(cheapRow, row);
        if (!Number.isFinite(f)) return;
        factors.push(f);
        if (cheapRow.unc!.major * CHECK > PLANNABLE_MAJOR_ARCSEC || REFERENCE_HORIZONS_H[k]! > MAX_HOURS) return;
        plannable.push(f);
        byHorizon.set(REFERENCE_HORIZONS_H[k]!, Math.max(byHorizon.get(REFERENCE_HORIZONS_H[k]!) ?? 0, f));
        if (f > CHECK) over.push(`${c.id} ${s === 0 ? 'follow-up' : 'survey'} +${REFERENCE_HORIZONS_H[k]} h: needs ${f.toFixed(2)} (full 1σ ${row.unc!.major.toFixed(0)}", first look ${cheapRow.unc!.major.toFixed(0)}")`);
      }),
    );
  }
  all.push(...factors);
  const s = [...factors].sort((a, b) => a - b);
  console.log(`  ${population.padEnd(9)} factor needed: median ${quantile(s, 0.5).toFixed(2)}, p99 ${quantile(s, 0.99).toFixed(2)}, max ${s.at(-1)!.toFixed(2)} (${s.length} ellipses)`);
}
const s = [...all].sort((a, b) => a - b);
console.log(`  all        factor needed: median ${quantile(s, 0.5).toFixed(2)}, p99 ${quantile(s, 0.99).toFixed(2)}, max ${s.at(-1)!.toFixed(2)} (${s.length} ellipses)`);
const p = [...plannable].sort((a, b) => a - b);
console.log(`  plannable after widening by ${CHECK} (1σ major ≤ ${PLANNABLE_MAJOR_ARCSEC}", up to +${MAX_HOURS} h): factor needed median ${quantile(p, 0.5).toFixed(2)}, p99 ${quantile(p, 0.99).toFixed(2)}, max ${p.at(-1)?.toFixed(2)} (${p.length} ellipses)`);
console.log(`  plannable, largest factor needed by horizon: ${[...byHorizon].sort((a, b) => a[0] - b[0]).map(([h, f]) => `+${h} h ${f.toFixed(2)}`).join(', ')}`);
const med = (xs: number[]) => quantile([...xs].sort((a, b) => a - b), 0.5);
console.log(`  estimate time: full median ${med(timesFull).toFixed(0)} ms, ${MEMBERS} orbits median ${med(timesCheap).toFixed(0)} ms`);
console.log(`  with factor ${CHECK}: ${over.length} of ${p.length} plannable ellipses narrower than the full estimate's 3σ region${over.length ? `:\n    ${over.join('\n    ')}` : ''}`);
console.log(`  finished ${new Date().toISOString()}, load ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
