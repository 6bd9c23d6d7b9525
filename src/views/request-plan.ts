import { z } from 'zod';

/**
 * What the pictures read from a stored request's plan (the planner's request body): its
 * ephemeris table, target, tracking and sequence. Read leniently: a plan without a table
 * still gives a window bar, it just has no curve of its own.
 */

const uncSchema = z.object({ major: z.number(), minor: z.number(), pa: z.number() });

const rowSchema = z.object({
  t: z.string(),
  ra: z.number(),
  dec: z.number(),
  raRate: z.number(),
  decRate: z.number(),
  unc: uncSchema.nullable(),
  mag: z.number().nullable(),
  alt: z.number(),
  airmass: z.number().nullable().optional(),
});

export type PlanRow = z.infer<typeof rowSchema>;
export type UncertaintyArcsec = z.infer<typeof uncSchema>;

const lenient = <T extends z.ZodType>(schema: T) => schema.nullable().optional().catch(null);

const planSchema = z.object({
  ephemeris: lenient(z.object({ rows: z.array(rowSchema) })),
  target: lenient(
    z.object({
      raDeg: z.number().optional(),
      decDeg: z.number().optional(),
      vMag: z.number().nullable().optional(),
      uncertainty1Sigma: z.object({ majorArcsec: z.number(), minorArcsec: z.number(), paDeg: z.number() }).nullable().optional(),
    }),
  ),
  tracking: lenient(z.object({ raRateArcsecPerS: z.number(), decRateArcsecPerS: z.number() })),
  sequence: lenient(z.object({ steps: z.array(z.object({ slitArcsec: z.number().optional(), filter: z.string().optional() })) })),
  expectedDurationS: lenient(z.number()),
  windowClosesBecause: lenient(z.string()),
  conditionsAtStart: lenient(z.object({ altitudeDeg: z.number(), airmass: z.number() })),
  searchPattern: lenient(
    z.object({
      pointings: z.array(z.object({ offsetEastArcsec: z.number(), offsetNorthArcsec: z.number() })),
      fieldArcsec: z.number(),
    }),
  ),
});

export interface PlanFacts {
  rows: PlanRow[];
  vMag: number | null;
  raRate: number | null;
  decRate: number | null;
  slitArcsec: number | null;
  /** Target place at the recommended start, deg (astrometric ICRS). */
  raDeg: number | null;
  decDeg: number | null;
  /** 1-sigma ellipse at the recommended start, arcsec and deg. */
  uncertainty: UncertaintyArcsec | null;
  durationS: number | null;
  closesBecause: string | null;
  /** Altitude (deg) and airmass at the recommended start, as the planner found them. */
  atStart: { altitudeDeg: number; airmass: number } | null;
  searchPattern: { offsets: { eastArcsec: number; northArcsec: number }[]; fieldArcsec: number } | null;
}

const NO_FACTS: PlanFacts = {
  rows: [],
  vMag: null,
  raRate: null,
  decRate: null,
  slitArcsec: null,
  raDeg: null,
  decDeg: null,
  uncertainty: null,
  durationS: null,
  closesBecause: null,
  atStart: null,
  searchPattern: null,
};

/** The parts of a request body the pictures and pages use; anything missing or malformed comes back empty or null. */
export function planFacts(body: unknown): PlanFacts {
  const parsed = planSchema.safeParse(body);
  if (!parsed.success) return NO_FACTS;
  const p = parsed.data;
  const rows = (p.ephemeris?.rows ?? []).filter((r) => Number.isFinite(Date.parse(r.t))).sort((a, b) => Date.parse(a.t) - Date.parse(b.t));
  const slit = p.sequence?.steps.find((s) => s.slitArcsec !== undefined)?.slitArcsec ?? null;
  const u = p.target?.uncertainty1Sigma ?? null;
  return {
    rows,
    vMag: p.target?.vMag ?? rows[0]?.mag ?? null,
    raRate: p.tracking?.raRateArcsecPerS ?? rows[0]?.raRate ?? null,
    decRate: p.tracking?.decRateArcsecPerS ?? rows[0]?.decRate ?? null,
    slitArcsec: slit,
    raDeg: p.target?.raDeg ?? null,
    decDeg: p.target?.decDeg ?? null,
    uncertainty: u ? { major: u.majorArcsec, minor: u.minorArcsec, pa: u.paDeg } : null,
    durationS: p.expectedDurationS ?? null,
    closesBecause: p.windowClosesBecause ?? null,
    atStart: p.conditionsAtStart ?? null,
    searchPattern: p.searchPattern ? { offsets: p.searchPattern.pointings.map((q) => ({ eastArcsec: q.offsetEastArcsec, northArcsec: q.offsetNorthArcsec })), fieldArcsec: p.searchPattern.fieldArcsec } : null,
  };
}

const wrap360 = (deg: number) => ((deg % 360) + 360) % 360;

/**
 * The table's row at `timeUtc`, linearly interpolated between the two rows around it (RA
 * across 0/360 and the ellipse position angle across 0/180 taken the short way); null when
 * the time lies outside the table. Exact at the table's own times. Linear interpolation over
 * the table's 5-minute spacing is the planner's own assumption for execution.
 */
export function rowAt(rows: readonly PlanRow[], timeUtc: Date): PlanRow | null {
  const tMs = timeUtc.getTime();
  for (let i = 0; i < rows.length; i++) {
    const a = rows[i]!;
    const aMs = Date.parse(a.t);
    if (aMs === tMs) return a;
    const b = rows[i + 1];
    if (!b) break;
    const bMs = Date.parse(b.t);
    if (tMs > aMs && tMs < bMs) {
      const f = (tMs - aMs) / (bMs - aMs);
      const lerp = (x: number, y: number) => x + (y - x) * f;
      let dRa = b.ra - a.ra;
      if (dRa > 180) dRa -= 360;
      if (dRa < -180) dRa += 360;
      let unc: UncertaintyArcsec | null = null;
      if (a.unc && b.unc) {
        let dPa = b.unc.pa - a.unc.pa;
        if (dPa > 90) dPa -= 180;
        if (dPa < -90) dPa += 180;
        unc = { major: lerp(a.unc.major, b.unc.major), minor: lerp(a.unc.minor, b.unc.minor), pa: ((a.unc.pa + dPa * f) % 180 + 180) % 180 };
      }
      return {
        t: timeUtc.toISOString(),
        ra: wrap360(a.ra + dRa * f),
        dec: lerp(a.dec, b.dec),
        raRate: lerp(a.raRate, b.raRate),
        decRate: lerp(a.decRate, b.decRate),
        unc,
        mag: a.mag !== null && b.mag !== null ? lerp(a.mag, b.mag) : null,
        alt: lerp(a.alt, b.alt),
        airmass: a.airmass != null && b.airmass != null ? lerp(a.airmass, b.airmass) : null,
      };
    }
  }
  return null;
}
