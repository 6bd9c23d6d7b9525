import { z } from 'zod';

/**
 * What the pages read from a stored assessment summary (src/planning/assess.ts writes it):
 * the estimate's summary and, per site, the observable windows and the reasons for missing
 * requests. Read leniently, field by field: a summary written by an older version, or a
 * part missing, leaves that part empty rather than failing the page.
 */

const percentiles = z.object({ p5: z.number(), p50: z.number(), p95: z.number() });

const estimateSchema = z.object({
  method: z.string().catch('unknown'),
  members: z.number().catch(0),
  rangeAu: percentiles.nullable().catch(null),
  classFractions: z
    .object({ nearEarth: z.number().optional(), neo: z.number().optional(), mainBelt: z.number(), other: z.number() })
    .transform((c) => ({ nearEarth: c.nearEarth ?? c.neo ?? null, mainBelt: c.mainBelt, other: c.other }))
    .nullable()
    .catch(null),
  hMag: percentiles.nullable().catch(null),
  diameterM: z.object({ min: z.number(), max: z.number() }).nullable().catch(null),
  minGeocentricDistance: z.object({ withinDays: z.number(), au: percentiles, lunarDistances: percentiles }).nullable().catch(null),
  closeApproach: z.boolean().nullable().catch(null),
  rmsArcsec: z.number().nullable().catch(null),
  notes: z.array(z.string()).catch([]),
});

const windowSchema = z.object({ start: z.string(), end: z.string(), opensBecause: z.string(), closesBecause: z.string() });

const siteSchema = z.object({
  siteId: z.string(),
  windows: z.array(windowSchema).catch([]),
  reasons: z.array(z.string()).catch([]),
});

const summarySchema = z.object({
  assessedAt: z.string().nullable().catch(null),
  horizonEnd: z.string().nullable().catch(null),
  estimate: estimateSchema.nullable().catch(null),
  sites: z.array(siteSchema).catch([]),
});

export type EstimateFacts = z.infer<typeof estimateSchema>;
export type SiteFacts = z.infer<typeof siteSchema>;
export type AssessmentFacts = z.infer<typeof summarySchema>;

const EMPTY: AssessmentFacts = { assessedAt: null, horizonEnd: null, estimate: null, sites: [] };

/** The parts of a stored assessment summary the pages use; what is missing or malformed comes back empty. */
export function assessmentFacts(summary: unknown): AssessmentFacts {
  const parsed = summarySchema.safeParse(summary ?? {});
  return parsed.success ? parsed.data : EMPTY;
}
