/**
 * `nightjar ephemeris --json` as a newcomer would use it on close approachers: the notice a survey
 * would send, made from the independent reference's fixture cases (test/reference/, which imports
 * nothing of src/), and the rows from the follow-up site on another continent, checked against the
 * truth from the reference's own integration with the reference's own sky geometry. The same bar
 * as the estimator's calibration subset (test/orbit/estimation/calibration.test.ts), here through
 * the notice format, the command's options and its JSON.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { CommandIo } from '../../src/commands/io.js';
import { main } from '../../src/commands/ephemeris.js';
import { REFERENCE_FOLLOW_UP_SITE, type ReferenceCase, type ReferencePopulation } from '../reference/cases.js';
import { loadFixture } from '../reference/fixture.js';
import { sigmaDistance, tangentOffsetArcsec } from '../reference/sky-geometry.js';

interface Row { t: string; ra: number; dec: number; unc: { major: number; minor: number; pa: number }; mag: number | null; magSigma: number | null }

const dir = mkdtempSync(join(tmpdir(), 'nightjar-ephemeris-reference-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The notice an invented survey would send for a reference case (one observer, its positions and magnitudes). */
function noticeOf(c: ReferenceCase): unknown {
  const site = c.observations[0]!.site;
  return {
    format: 'nightjar.notice.v1',
    noticeId: `ref-${c.id}`,
    objectId: `RF${c.id.replace(/[^0-9]/g, '')}`,
    issuedAt: new Date(c.lastObservationMs + 600_000).toISOString(),
    sender: 'Reference survey (invented)',
    observer: { lat: site.latDeg, lon: site.lonDeg, height: site.heightM },
    observations: c.observations.map((o) => ({ t: o.t, ra: o.raDeg, dec: o.decDeg, sigma: o.sigmaArcsec, mag: o.mag, band: o.band })),
  };
}

/** The command's rows from the follow-up site at the reference's horizons, each beside the truth there. */
async function rowsAgainstTruth(c: ReferenceCase): Promise<{ row: Row; truth: ReferenceCase['truth'][number] }[]> {
  const path = join(dir, `${c.id}.json`);
  writeFileSync(path, JSON.stringify(noticeOf(c)));
  const truths = c.truth.filter((p) => p.site === 'followUp');
  const out: string[] = [];
  const io: CommandIo = { stdout: (t) => out.push(t), stderr: () => undefined, env: {}, cwd: process.cwd() };
  const site = REFERENCE_FOLLOW_UP_SITE;
  const args = ['--notice', path, `--lat=${site.latDeg}`, `--lon=${site.lonDeg}`, '--height', String(site.heightM), '--times', truths.map((p) => new Date(p.utcMs).toISOString()).join(','), '--json'];
  expect(await main(args, io)).toBe(0);
  const { rows } = JSON.parse(out.join('')) as { rows: Row[] };
  return truths.map((truth, k) => ({ row: rows[k]!, truth }));
}

const closePopulations: ReferencePopulation[] = ['encounter', 'slow'];
const fixture = loadFixture();
/** Each population's rows, computed once for both checks. */
const rowsByPopulation = new Map<ReferencePopulation, ReturnType<typeof rowsAgainstTruth>>();
const rowsOf = async (population: ReferencePopulation) => {
  if (!rowsByPopulation.has(population)) {
    rowsByPopulation.set(population, Promise.all(fixture.filter((c) => c.population === population).map(rowsAgainstTruth)).then((all) => all.flat()));
  }
  return rowsByPopulation.get(population)!;
};

describe('nightjar ephemeris on close approachers of the independent reference', () => {
  for (const population of closePopulations) {
    it(`holds the truth inside the 3-sigma ellipse in at least 95 % of the ${population} fixture's rows, +1 to +48 h from the follow-up site`, async () => {
      const pairs = await rowsOf(population);
      const inside = pairs.filter(({ row, truth }) => {
        const [east, north] = tangentOffsetArcsec(row.ra, row.dec, truth.raDeg, truth.decDeg);
        return sigmaDistance(row.unc, east, north) <= 3;
      });
      expect(pairs).toHaveLength(60);
      expect(inside.length / pairs.length).toBeGreaterThanOrEqual(0.95);
    });

    it(`gives the ${population} fixture's V within 3 magSigma of the truth's in at least 95 % of its rows`, async () => {
      const pairs = await rowsOf(population);
      const inside = pairs.filter(({ row, truth }) => row.mag !== null && row.magSigma !== null && Math.abs(row.mag - truth.vMag) <= 3 * row.magSigma);
      expect(inside.length / pairs.length).toBeGreaterThanOrEqual(0.95);
    });
  }
});
