import { z } from 'zod';
import type { GeodeticLocation } from '../domain/tracklet.js';

/**
 * Configuration schemas: service settings, sites, telescopes and instruments.
 * Units are in the field names (DESIGN.md conventions). Every site field that a
 * hard limit reads is required, so a site can never be planned with a limit missing.
 */

/** True when the runtime's time-zone database knows `name` (Intl, ICU). */
function isTimeZone(name: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: name });
    return true;
  } catch {
    return false;
  }
}

const finite = () => z.number().refine(Number.isFinite, 'expected a finite number');
const fraction = () => finite().min(0).max(1);
const positive = () => finite().positive();
const nonNegative = () => finite().min(0);

export const locationSchema = z
  .object({
    latDeg: finite().min(-90).max(90),
    lonDeg: finite().min(-180).max(360),
    heightM: finite().min(-500).max(10_000),
  })
  .strict() satisfies z.ZodType<GeodeticLocation>;

/** Minimum altitude over an azimuth range, for trees, domes and mountains. */
export const horizonMaskPointSchema = z
  .object({
    azDeg: finite().min(0).max(360),
    minAltitudeDeg: finite().min(0).max(90),
  })
  .strict();

export const rangeSchema = (lo: number, hi: number) =>
  z
    .object({ min: finite().min(lo).max(hi), max: finite().min(lo).max(hi) })
    .strict()
    .refine((r) => r.min <= r.max, { message: 'min must not exceed max' });

export const limitsSchema = z
  .object({
    /** Sun altitude that starts the night (e.g. -12 nautical, -18 astronomical). */
    nightSunAltitudeDeg: finite().min(-30).max(0),
    minAltitudeDeg: finite().min(0).max(89),
    /** Piecewise-linear mask by azimuth (north = 0, east = 90); the larger of it and minAltitudeDeg binds. */
    horizonMask: z.array(horizonMaskPointSchema).max(360).optional(),
    maxAirmass: finite().min(1).max(40).optional(),
    /** Allowed hour angle, hours, west positive. */
    hourAngleH: rangeSchema(-12, 12),
    decDeg: rangeSchema(-90, 90),
    maxRateArcsecPerS: positive(),
    /** Alt-az mounts cannot track through the zenith: no target above 90 - zenithKeepOutDeg. */
    zenithKeepOutDeg: nonNegative().max(30),
    /** Never overridden by any score. */
    sunAvoidanceDeg: finite().min(0).max(180),
    minMoonSeparationDeg: finite().min(0).max(180),
    /** When true, the Moon separation limit is minMoonSeparationDeg x illuminated fraction (at least 3 deg). */
    moonSeparationScalesWithIllumination: z.boolean().default(false),
  })
  .strict();

export const telescopeSchema = z
  .object({
    apertureM: positive().max(50),
    /** Diameter of the central obstruction, as a fraction of the aperture diameter. */
    obstructionFraction: fraction().max(0.9),
  })
  .strict();

export const filterSchema = z
  .object({
    name: z.string().min(1).max(16),
    /** Magnitude giving 1 e-/s above the atmosphere with this telescope, imager and filter. */
    zeroPointMag: finite().min(10).max(35),
    /** Extinction coefficient, mag per airmass. */
    extinctionMagPerAirmass: nonNegative().max(2),
    /** Sky brightness at zenith on a dark night in this band, mag/arcsec^2 (V value used when absent). */
    darkSkyMagPerArcsec2: finite().min(10).max(25).optional(),
    /** Mean asteroid colour in this band, m_band - V, mag; absent: the photometry module's table of mean colours. */
    asteroidColourFromVMag: finite().min(-3).max(3).optional(),
  })
  .strict();

/** Exposure-planning choices of a site; absent ones take the photometry module's documented defaults. */
export const exposureSettingsSchema = z
  .object({
    /** SNR to reach: per light-curve frame, per colour filter, per spectral resolution element. */
    targetSnr: z
      .object({ photometry: positive().max(1000).optional(), colours: positive().max(1000).optional(), spectrum: positive().max(1000).optional() })
      .strict()
      .optional(),
    /** Per-frame overhead beyond readout (file write, guiding settle), s. */
    frameOverheadS: nonNegative().max(600).optional(),
    /** Time to change filters, s. */
    filterChangeS: nonNegative().max(600).optional(),
    /** Fraction of full well the brightest pixel may reach. */
    saturationFraction: finite().gt(0).max(1).optional(),
  })
  .strict();

export const imagerSchema = z
  .object({
    pixelScaleArcsec: positive().max(60),
    fieldArcmin: z.object({ width: positive().max(600), height: positive().max(600) }).strict(),
    readNoiseE: nonNegative().max(1000),
    gainEPerAdu: positive().max(1000),
    darkEPerPixelPerS: nonNegative().max(1000),
    fullWellE: positive(),
    readoutS: nonNegative().max(600),
    maxExposureS: positive().max(7200),
    filters: z.array(filterSchema).min(1).max(32),
  })
  .strict();

export const spectrographSchema = z
  .object({
    slitWidthsArcsec: z.array(positive().max(60)).min(1).max(16),
    slitLengthArcsec: positive().max(3600),
    /** Field of the acquisition camera the target must be found in, arcsec (square). */
    acquisitionFieldArcsec: positive().max(7200),
    wavelengthRangeNm: rangeSchema(100, 30_000),
    referenceWavelengthNm: positive().max(30_000),
    dispersionNmPerPixel: positive().max(100),
    /** Resolution element in pixels along the dispersion for the narrowest slit. */
    resolutionElementPixels: positive().max(100),
    /** Spatial pixel scale along the slit, arcsec/pixel. */
    pixelScaleArcsec: positive().max(60),
    /** Total efficiency (atmosphere excluded) at the reference wavelength, telescope included. */
    throughput: fraction(),
    readNoiseE: nonNegative().max(1000),
    gainEPerAdu: positive().max(1000),
    darkEPerPixelPerS: nonNegative().max(1000),
    readoutS: nonNegative().max(600),
    maxExposureS: positive().max(7200),
    /** Overhead to acquire and centre a moving target on the slit, seconds. */
    acquisitionS: nonNegative().max(3600),
  })
  .strict();

/** How long a light-curve request may be, minutes; absent fields take the photometry module's defaults (30 and 120). */
export const lightCurveSettingsSchema = z
  .object({
    minMinutes: positive().max(1440).optional(),
    maxMinutes: positive().max(1440).optional(),
  })
  .strict()
  .refine((b) => b.minMinutes === undefined || b.maxMinutes === undefined || b.minMinutes <= b.maxMinutes, {
    message: 'minMinutes must not exceed maxMinutes',
  });

export const siteSchema = z
  .object({
    id: z
      .string()
      .regex(/^[a-z0-9][a-z0-9-]{0,31}$/, 'expected lower-case letters, digits and hyphens (1-32)'),
    name: z.string().min(1).max(120),
    location: locationSchema,
    /** IANA time zone of the site (e.g. America/Denver), for local clock times in the pictures; absent: local mean time. */
    timeZone: z
      .string()
      .min(1)
      .max(64)
      .refine(isTimeZone, 'expected an IANA time zone name such as America/Denver or Asia/Tokyo')
      .optional(),
    mount: z.enum(['equatorial', 'altaz']),
    limits: limitsSchema,
    telescope: telescopeSchema,
    imager: imagerSchema,
    spectrograph: spectrographSchema.optional(),
    exposure: exposureSettingsSchema.optional(),
    lightCurve: lightCurveSettingsSchema.optional(),
    typicalSeeingArcsec: positive().max(20),
    /** V-band zenith sky brightness on a moonless dark night, mag/arcsec^2. */
    darkSkyVMagPerArcsec2: finite().min(15).max(23),
  })
  .strict();

export const feedSchema = z
  .object({
    id: z.string().regex(/^[a-z0-9][a-z0-9-]{0,31}$/, 'expected lower-case letters, digits and hyphens'),
    url: z.url(),
    /** node-cron expression (seconds field optional). */
    schedule: z.string().min(1).max(100).default('*/2 * * * *'),
    timeoutMs: z.number().int().min(100).max(120_000).default(10_000),
    /** Longest wait between attempts after repeated failures. */
    maxBackoffS: z.number().int().min(1).max(86_400).default(1800),
  })
  .strict();

export const webhookSchema = z
  .object({
    id: z.string().regex(/^[a-z0-9][a-z0-9-]{0,31}$/, 'expected lower-case letters, digits and hyphens'),
    url: z.url(),
    /**
     * Signing key (Standard Webhooks, HMAC-SHA256): `whsec_` followed by the base64 of at least
     * 24 random bytes, as Standard Webhooks writes secrets, or any text of at least 16 characters
     * (its UTF-8 bytes are the key).
     */
    secret: z
      .string()
      .min(16)
      .max(512)
      .refine((s) => !s.startsWith('whsec_') || (/^whsec_[A-Za-z0-9+/]+={0,2}$/.test(s) && Buffer.from(s.slice(6), 'base64').length >= 24), {
        message: 'a secret beginning whsec_ must go on with the base64 of at least 24 bytes (e.g. whsec_ followed by `openssl rand -base64 32`)',
      }),
    /** Only requests scoring at least this (0-100) are pushed. */
    minScore: finite().min(0).max(100).default(70),
    /** Only these sites; all when absent. */
    sites: z.array(z.string().min(1)).max(64).optional(),
    timeoutMs: z.number().int().min(100).max(60_000).default(5000),
    maxAttempts: z.number().int().min(1).max(100).default(12),
  })
  .strict();

export const roleSchema = z.enum(['reader', 'scheduler', 'feeder', 'operator']);
export type Role = z.infer<typeof roleSchema>;

export const tokenSchema = z
  .object({
    name: z.string().min(1).max(64),
    /** Hex SHA-256 of the bearer token; the token itself is never stored. */
    sha256: z.string().regex(/^[0-9a-f]{64}$/, 'expected 64 lower-case hex characters'),
    roles: z.array(roleSchema).min(1),
  })
  .strict();

export const serviceSchema = z
  .object({
    host: z.string().min(1).default('127.0.0.1'),
    port: z.number().int().min(0).max(65_535).default(8470),
    databasePath: z.string().min(1).default('data/nightjar.sqlite'),
    logLevel: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
    inbox: z
      .object({
        path: z.string().min(1).default('data/inbox'),
        /** A file is read once unchanged for this long (or renamed into place). */
        settleMs: z.number().int().min(0).max(600_000).default(3000),
        /** Copy config/demo/notices into an empty inbox at first start. */
        seedDemo: z.boolean().default(true),
        schedule: z.string().min(1).default('*/5 * * * * *'),
      })
      .strict()
      .prefault({}),
    feeds: z.array(feedSchema).max(64).default([]),
    webhooks: z.array(webhookSchema).max(64).default([]),
    schedules: z
      .object({
        replan: z.string().min(1).default('*/10 * * * *'),
        lapse: z.string().min(1).default('* * * * *'),
        expireLeases: z.string().min(1).default('*/30 * * * * *'),
        deliverWebhooks: z.string().min(1).default('*/10 * * * * *'),
      })
      .strict()
      .prefault({}),
    tokens: z.array(tokenSchema).max(256).default([]),
    /** Leave GET endpoints open to callers on the loopback interface. */
    openReadsOnLoopback: z.boolean().default(false),
    bodyLimitBytes: z.number().int().min(1024).max(64 * 1024 * 1024).default(4 * 1024 * 1024),
    /** Requests per minute allowed per token (or per address without one); 429 beyond. */
    rateLimitPerMinute: z.number().int().min(1).max(1_000_000).default(1200),
    /** Worker threads for assessments; default: cores - 1, at least 1 (docs/performance.md, "Worker threads"). */
    workers: z.number().int().min(1).max(64).optional(),
    /** Bounds on the work one object can cause (README "Bounded work"). */
    workLimits: z
      .object({
        /** Time limit of one assessment (orbit estimate and plans for every site), seconds. */
        assessmentS: z.number().min(1).max(3600).default(60),
        /** Time limit of one on-demand estimate (ephemeris endpoint, pictures), seconds. */
        estimateS: z.number().min(1).max(600).default(20),
        /** Longest wait of an on-demand request for the estimate worker before 503 with retry-after, ms. */
        estimateWaitMs: z.number().int().min(0).max(60_000).default(2000),
        /** Heap limit of each worker thread (V8 old generation), MB. */
        workerHeapMb: z.number().int().min(128).max(16_384).default(1024),
        /** An assessment running longer than this no longer holds back the queue: another worker takes the next object, seconds. */
        slowAssessmentS: z.number().min(1).max(3600).default(5),
        /** A stop ends within this many seconds whatever the workers are doing. */
        stopDeadlineS: z.number().min(1).max(300).default(10),
      })
      .strict()
      .prefault({}),
    /** Clock skew allowed for notice times in the future, minutes. */
    futureToleranceMin: finite().min(0).max(1440).default(5),
  })
  .strict();

const weight = () => finite().min(0).max(100).optional();

/** The range priors a configuration or command may choose (docs/accuracy.md). */
export const RANGE_PRIOR_CHOICES = ['auto', 'mixture', 'population', 'encounter', 'powerLaw'] as const;
export type RangePriorChoice = (typeof RANGE_PRIOR_CHOICES)[number];

export const planningSchema = z
  .object({
    horizonH: positive().max(240).default(36),
    /** Virtual orbits per tracklet-only estimate. */
    members: z.number().int().min(50).max(20_000).default(1000),
    /**
     * Range prior of the short-arc estimate (docs/accuracy.md): 'auto' = the
     * default 'mixture' of the population model and close encounters of any
     * orbit; 'population' alone (sharper for main-belt objects, but it talks
     * close approachers away); 'encounter' alone; or 'powerLaw' (rho^0.5).
     */
    rangePrior: z.enum(RANGE_PRIOR_CHOICES).default('auto'),
    /**
     * Memory each assessment worker may give to estimates and propagated tracks kept for the
     * next replan of an unchanged object, MB (about 0.2 MB an object at 1000 virtual orbits;
     * docs/performance.md); 0 keeps nothing and every replan computes afresh.
     */
    reuseMb: z.number().int().min(0).max(16_384).default(512),
    /**
     * New-data items waiting at which an object never assessed in full is first assessed with a
     * cheaper estimate (fewer virtual orbits, widened regions), refined when the queue has room
     * (docs/performance.md); 0: never.
     */
    firstLookBacklog: z.number().int().min(0).max(1_000_000).default(20),
    /** Score weights; missing ones take the documented defaults (docs/scoring.md). */
    weights: z
      .object({
        urgency: weight(),
        value: weight(),
        feasibility: weight(),
        freshness: weight(),
        size: weight(),
        closeApproach: weight(),
        nearEarthFraction: weight(),
        /** The old name of nearEarthFraction, refused with a message naming the new one. */
        neoLikeness: z.never({ error: 'renamed: use nearEarthFraction (the weight of the fraction of virtual orbits with q < 1.3 au)' }).optional(),
      })
      .strict()
      .default({}),
  })
  .strict()
  .prefault({});

/** The living demo: simulated notices relative to the clock instead of the fixed example files. */
export const demoSchema = z
  .object({
    /** Seed an empty inbox with simulated notices (else with the fixed files of config/demo/notices). */
    simulate: z.boolean().default(false),
    seedCount: z.number().int().min(1).max(200).default(8),
    /** Drop one new simulated notice into the inbox every this many minutes; 0 = never. */
    dripMinutes: z.number().int().min(0).max(1440).default(0),
  })
  .strict()
  .prefault({});

/** How far a V filter's dark sky may differ from the site's darkSkyVMagPerArcsec2 (rounding), mag. */
export const DARK_SKY_AGREEMENT_MAG = 0.01;

export const configSchema = z
  .object({
    service: serviceSchema.prefault({}),
    planning: planningSchema,
    demo: demoSchema,
    sites: z.array(siteSchema).min(1).max(64),
  })
  .strict()
  .superRefine((cfg, ctx) => {
    const seen = new Set<string>();
    cfg.sites.forEach((site, i) => {
      if (seen.has(site.id)) ctx.addIssue({ code: 'custom', path: ['sites', i, 'id'], message: `duplicate site id "${site.id}"` });
      seen.add(site.id);
      // Band skies are the V sky plus each filter's dark-sky colour against the site's V sky, so a V
      // filter's own dark sky must be the site's: otherwise V would be planned under another sky.
      site.imager.filters.forEach((filter, j) => {
        const dark = filter.darkSkyMagPerArcsec2;
        if (filter.name === 'V' && dark !== undefined && Math.abs(dark - site.darkSkyVMagPerArcsec2) > DARK_SKY_AGREEMENT_MAG) {
          ctx.addIssue({
            code: 'custom',
            path: ['sites', i, 'imager', 'filters', j, 'darkSkyMagPerArcsec2'],
            message: `${dark} contradicts the site's darkSkyVMagPerArcsec2 ${site.darkSkyVMagPerArcsec2}: a V filter's dark sky must equal the site's V sky (or be left out)`,
          });
        }
      });
    });
  });

export type Config = z.infer<typeof configSchema>;
export type ServiceConfig = Config['service'];
export type Site = z.infer<typeof siteSchema>;
export type SiteLimits = z.infer<typeof limitsSchema>;
export type Imager = z.infer<typeof imagerSchema>;
export type Spectrograph = z.infer<typeof spectrographSchema>;
export type Filter = z.infer<typeof filterSchema>;
export type Telescope = z.infer<typeof telescopeSchema>;
/** A site's place (the shared type of src/domain/, which the location schema produces). */
export type { GeodeticLocation };
export type FeedConfig = z.infer<typeof feedSchema>;
export type WebhookConfig = z.infer<typeof webhookSchema>;
