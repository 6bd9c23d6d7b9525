import { z } from 'zod';

/**
 * The executable plan of a request (format `nightjar.request.v1`) as documented in
 * the OpenAPI document: what the queue software runs. Units are in the names or in
 * `ephemeris.units`. Estimates, not impact predictions; the observatory decides.
 * (The planner builds it; test/api/plan-schema.test.ts checks real plans against this.)
 */

const ellipse1Sigma = z
  .object({ majorArcsec: z.number(), minorArcsec: z.number(), paDeg: z.number().describe('deg east of north') })
  .nullable()
  .describe('1-sigma uncertainty ellipse at the recommended start');

const sequenceStep = z.object({
  filter: z.string().optional().describe('imager filter (photometry, colours)'),
  slitArcsec: z.number().optional().describe('slit width (spectrum)'),
  exposureS: z.number().describe('single exposure, s'),
  count: z.number().int().describe('number of exposures'),
  expectedSnr: z.number().describe('SNR of the step (stacked when count > 1 for colours and spectra)'),
  snrPerExposure: z.number(),
  limitingFactor: z.string().describe('what caps the exposure, in words, e.g. "sky-limited", "drift out of slit", "saturation"'),
});

const tableRow = z.object({
  t: z.string().describe('ISO-8601 UTC'),
  ra: z.number().describe('deg, astrometric ICRS seen from the site'),
  dec: z.number().describe('deg'),
  raRate: z.number().describe('arcsec/s, dRA/dt x cos Dec'),
  decRate: z.number().describe('arcsec/s'),
  unc: z.object({ major: z.number(), minor: z.number(), pa: z.number() }).nullable().describe('1-sigma ellipse, arcsec, pa deg east of north'),
  mag: z.number().nullable().describe('V'),
  alt: z.number().describe('apparent altitude, deg'),
  airmass: z.number().nullable(),
});

export const planSchema = z
  .object({
    format: z.literal('nightjar.request.v1'),
    objectId: z.string(),
    siteId: z.string(),
    kind: z.enum(['photometry', 'colours', 'spectrum']),
    plannedAtUtc: z.string(),
    windowStartUtc: z.string(),
    windowEndUtc: z.string(),
    windowOpensBecause: z.string().describe('the limit that opens the window, in words'),
    windowClosesBecause: z.string(),
    recommendedStartUtc: z.string(),
    expectedDurationS: z.number(),
    expiresAtUtc: z.string(),
    target: z
      .object({
        raDeg: z.number(),
        decDeg: z.number(),
        vMag: z.number(),
        vMagSigma: z.number().nullable(),
        uncertainty1Sigma: ellipse1Sigma,
        region3SigmaAcrossArcsec: z.number().nullable(),
      })
      .passthrough()
      .describe('where to point at the recommended start'),
    sequence: z
      .object({
        steps: z.array(sequenceStep),
        cadenceS: z.number().optional().describe('light curve: one exposure every this many seconds'),
        filterCycle: z.array(z.string()).optional().describe('colours: filter order within a cycle'),
        cycles: z.number().optional(),
        recentreEveryS: z.number().nullable().optional().describe('spectrum: re-centre on the slit this often'),
        acquisitionS: z.number().optional(),
        resolvingPower: z.number().optional(),
        notes: z.array(z.string()),
      })
      .passthrough()
      .describe('the exposure sequence'),
    lightCurve: z
      .object({
        likelyDiameterM: z.number().nullable().describe('the size the length is chosen for (geometric mean of the diameter range)'),
        longestPlausiblePeriodS: z.number().describe('longest rotation period worth planning for at that size, s'),
        periodBasis: z.string(),
        wantedS: z.number().describe('two cycles of that period, s'),
        boundsS: z.object({ min: z.number(), max: z.number() }).describe("the site's lightCurve.minMinutes and maxMinutes, s"),
        sequenceS: z.number().describe('what this request takes, s'),
        part: z.number().int().describe('1, or 2 for the follow-on in a later window'),
        parts: z.number().int(),
        followOnS: z.number().describe('length of the follow-on request this one leads to, s; 0 when none'),
      })
      .optional()
      .describe('photometry only: why the light curve is as long as it is (docs/scoring.md)'),
    tracking: z
      .object({
        mode: z.literal('non-sidereal'),
        atUtc: z.string(),
        raRateArcsecPerS: z.number().describe('dRA/dt x cos Dec'),
        decRateArcsecPerS: z.number(),
        totalRateArcsecPerS: z.number(),
      })
      .describe('non-sidereal rates at the recommended start; update them from the ephemeris table'),
    conditionsAtStart: z.object({ altitudeDeg: z.number(), airmass: z.number(), skyVMagPerArcsec2: z.number(), moonSeparationDeg: z.number() }),
    searchPattern: z
      .object({
        pointings: z.array(z.object({ raDeg: z.number(), decDeg: z.number(), offsetEastArcsec: z.number(), offsetNorthArcsec: z.number() })),
        fieldArcsec: z.number(),
        overlapFraction: z.number(),
        semiMajor3SigmaArcsec: z.number(),
        semiMinor3SigmaArcsec: z.number(),
        paDeg: z.number(),
      })
      .nullable()
      .describe('pointings covering the 3-sigma region when it is larger than the imager field'),
    ephemeris: z.object({ stepMin: z.number(), frame: z.string(), units: z.record(z.string(), z.string()), rows: z.array(tableRow) }),
    score: z.object({
      total: z.number().describe('0-100'),
      factors: z.array(
        z.object({
          name: z.enum(['urgency', 'value', 'feasibility', 'freshness']),
          value: z.number().describe('0-1'),
          weight: z.number(),
          why: z.string(),
          parts: z.array(z.object({ name: z.string(), value: z.number() })),
        }),
      ),
    }),
    assessment: z
      .object({
        method: z.string(),
        members: z.number(),
        firstObservedAtUtc: z.string(),
        hMagP50: z.number().nullable(),
        diameterM: z.object({ min: z.number(), max: z.number() }).nullable(),
        nearEarthFraction: z.number().describe('fraction of the virtual orbits with perihelion distance q < 1.3 au'),
        closeApproach: z.boolean(),
        minDistanceLunarP50: z.number(),
        notes: z.array(z.string()),
        firstLook: z.literal(true).optional().describe('present on a first look: a cheaper estimate taken while new data wait, its uncertainty widened; the full assessment revises the request in place'),
      })
      .passthrough(),
  })
  .passthrough()
  .meta({ id: 'Plan', description: 'What to execute: the exposure sequence, tracking rates, ephemeris table and score factors. Estimates, not impact predictions; the observatory decides.' });
