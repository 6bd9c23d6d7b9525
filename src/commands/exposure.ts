import type { Site } from '../config/schema.js';
import { loadConfig } from '../config/load.js';
import type { NotFeasible, ObservingConditions } from '../photometry/conditions.js';
import { PlanConfigError } from '../photometry/conditions.js';
import { coloursPlan, photometryPlan, spectrumPlan, type ExposurePlan, type PlanOptions, type PlanResult } from '../photometry/plans.js';
import { altitudeForAirmassDeg } from '../sky/site.js';
import { siteVExtinctionMagPerAirmass, skyBrightnessKS } from '../sky/sky-brightness.js';
import { asOptionError, parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';
import { UsageError } from './io.js';

/**
 * `nightjar exposure`: exposure plans for one object at one site, from the
 * command line. The sky at the target is the Krisciunas & Schaefer (1991) model
 * of the sky module: the site's dark zenith sky brightened to the airmass, plus
 * moonlight when --moon-sep and --moon-illum are given. Assumption: the Moon
 * stands at the same altitude as the target (a fixed, stated geometry, since the
 * command is not given a time); its phase angle follows from the illuminated
 * fraction k as acos(2k - 1).
 */
export const HELP = `nightjar exposure --site ID --instrument imager|spectrograph --mag V --rate ARCSEC_PER_S
                  [--rate-sigma ARCSEC_PER_S] [--filter F] [--snr N] [--airmass X]
                  [--moon-sep DEG --moon-illum FRACTION] [--diameter-m MIN,MAX]
                  [--slit ARCSEC] [--window-min MIN] [--json] [--config FILE]

Prints exposure plans for an object of predicted V magnitude moving at the given
sky-plane rate, with non-sidereal tracking whose rate error is --rate-sigma.
imager: a light-curve plan in --filter (default V) and, without --filter, a
colours plan over the configured g, r, i, z. spectrograph: a slit-spectrum plan
(SNR per resolution element at the reference wavelength) with its limiting
magnitude. Each step gives exposure seconds, count, expected SNR, every cap on a
single exposure, and the limiting factor in words.

Sky: the site's dark V sky at the zenith, brightened to the airmass, plus
moonlight (Krisciunas & Schaefer 1991) when --moon-sep and --moon-illum are
given; the Moon is taken to stand at the target's altitude.

Options:
  --site ID              site id from the configuration (required)
  --instrument NAME      imager or spectrograph (required)
  --mag V                predicted V magnitude (required)
  --rate R               total sky-plane rate, arcsec/s (required)
  --rate-sigma S         1-sigma rate uncertainty, arcsec/s (default 0: no smear cap)
  --filter F             light-curve filter (imager; default V)
  --snr N                target SNR (default 20 light curve, 30 colours, 20 spectrum)
  --airmass X            airmass at the target (default 1.0)
  --moon-sep DEG         Moon-target separation, degrees (with --moon-illum)
  --moon-illum FRACTION  Moon illuminated fraction 0..1 (with --moon-sep)
  --diameter-m MIN,MAX   plausible diameter range, m (sets the light-curve cadence)
  --slit ARCSEC          slit width (spectrograph; default: the quickest configured slit)
  --window-min MIN       time available, minutes (default 60)
  --json                 print JSON instead of text
  --config FILE          configuration file (default: NIGHTJAR_CONFIG, else the demo)
  -h, --help             show this help

Exit status: 0 when at least one plan is feasible, 1 when none is, 2 for bad arguments.`;

interface Values {
  site?: string | undefined;
  instrument?: string | undefined;
  mag?: string | undefined;
  rate?: string | undefined;
  'rate-sigma'?: string | undefined;
  filter?: string | undefined;
  snr?: string | undefined;
  airmass?: string | undefined;
  'moon-sep'?: string | undefined;
  'moon-illum'?: string | undefined;
  'diameter-m'?: string | undefined;
  slit?: string | undefined;
  'window-min'?: string | undefined;
  json?: boolean | undefined;
  config?: string | undefined;
  help?: boolean | undefined;
}

/** The plan functions' field names and the options they come from. */
const OPTION_OF_FIELD: Readonly<Record<string, string>> = {
  vMag: '--mag',
  rateArcsecPerS: '--rate',
  rateSigmaArcsecPerS: '--rate-sigma',
  targetSnr: '--snr',
  airmass: '--airmass',
  moonSeparationDeg: '--moon-sep',
  slitArcsec: '--slit',
  windowS: '--window-min (in seconds)',
  'diameterRangeM.minM': '--diameter-m',
};

function numberOption(name: string, text: string | undefined, lo: number, hi: number): number | undefined {
  if (text === undefined) return undefined;
  const value = Number(text);
  if (text.trim() === '' || !Number.isFinite(value)) throw new UsageError(`--${name} ${text}: expected a number`);
  if (value < lo || value > hi) throw new UsageError(`--${name} ${text}: expected a number from ${lo} to ${hi}`);
  return value;
}

function required(name: string, text: string | undefined, lo: number, hi: number): number {
  const value = numberOption(name, text, lo, hi);
  if (value === undefined) throw new UsageError(`--${name} is required`);
  return value;
}

/** How the sky at the target was worked out, for the output. */
export interface SkyAtTarget {
  vMagPerArcsec2: number;
  targetAltitudeDeg: number;
  moon: { separationDeg: number; illuminatedFraction: number; phaseAngleDeg: number; altitudeDeg: number } | null;
}

/** KS91 sky at the target for the command's inputs (Moon at the target's altitude). */
export function skyForCommand(site: Site, airmass: number, moon: { separationDeg: number; illuminatedFraction: number } | null): SkyAtTarget {
  const targetAltitudeDeg = altitudeForAirmassDeg(airmass);
  const phaseAngleDeg = moon === null ? 180 : (Math.acos(2 * moon.illuminatedFraction - 1) * 180) / Math.PI;
  const sky = skyBrightnessKS({
    darkZenithVMagPerArcsec2: site.darkSkyVMagPerArcsec2,
    extinctionMagPerAirmass: siteVExtinctionMagPerAirmass(site),
    moonPhaseAngleDeg: phaseAngleDeg,
    moonSeparationDeg: moon?.separationDeg ?? 180,
    moonAltitudeDeg: moon === null ? -90 : targetAltitudeDeg,
    targetAltitudeDeg,
  });
  return {
    vMagPerArcsec2: sky.vMagPerArcsec2,
    targetAltitudeDeg,
    moon: moon === null ? null : { ...moon, phaseAngleDeg, altitudeDeg: targetAltitudeDeg },
  };
}

const f = (x: number, digits: number): string => x.toFixed(digits);

function formatPlan(plan: PlanResult): string[] {
  if (!plan.feasible) return [`${plan.kind}: not feasible: ${plan.reason}`];
  const lines: string[] = [];
  const p: ExposurePlan = plan;
  switch (p.kind) {
    case 'photometry':
      lines.push(
        `photometry (light curve), filter ${p.steps[0].filter ?? '?'}: cadence ${f(p.cadenceS, 1)} s over ${f(p.sequenceS / 60, 1)} min` +
          (p.spin === null ? '' : `; periods ${f(p.spin.minPeriodS, 0)} s to ${f(p.spin.maxPeriodS / 3600, 1)} h`),
      );
      break;
    case 'colours':
      lines.push(`colours: cycle ${p.cycle.join(' ')} x ${p.cycles}, ${f(p.totalS / 60, 1)} min`);
      break;
    case 'spectrum':
      lines.push(
        `spectrum: slit ${p.slitArcsec} arcsec (passes ${f(p.slitFraction * 100, 1)} %), resolution ${f(p.resolutionNm, 2)} nm (R ${f(p.resolvingPower, 0)}) at ${p.referenceWavelengthNm} nm, ${f(p.totalS / 60, 1)} min with acquisition`,
        `  limiting V for the SNR: ${f(p.limitingMagnitude.singleExposureV, 2)} in one longest exposure, ${f(p.limitingMagnitude.windowV, 2)} in ${f(p.limitingMagnitude.windowS / 60, 0)} min` +
          (p.recentreEveryS === null ? '' : `; re-centre every ${f(p.recentreEveryS / 60, 1)} min`),
      );
      break;
  }
  for (const s of p.steps) {
    const what = s.filter !== undefined ? s.filter : `slit ${s.slitArcsec ?? '?'}"`;
    const stacked = s.count > 1 && p.kind !== 'photometry' ? ` (stack of ${s.count}; ${f(s.snrPerExposure, 1)} each)` : '';
    lines.push(`  ${what}: ${f(s.exposureS, 1)} s x ${s.count}, SNR ${f(s.snr, 1)}${stacked}; ${s.limitingFactor}`);
    lines.push(`    caps: ${s.limits.map((l) => `${l.kind} ${f(l.maxExposureS, 1)} s`).join('; ')}`);
  }
  for (const note of p.notes) lines.push(`  note: ${note}`);
  return lines;
}

function isNotFeasible(plan: PlanResult): plan is NotFeasible {
  return !plan.feasible;
}

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, {
        site: { type: 'string' },
        instrument: { type: 'string' },
        mag: { type: 'string' },
        rate: { type: 'string' },
        'rate-sigma': { type: 'string' },
        filter: { type: 'string' },
        snr: { type: 'string' },
        airmass: { type: 'string' },
        'moon-sep': { type: 'string' },
        'moon-illum': { type: 'string' },
        'diameter-m': { type: 'string' },
        slit: { type: 'string' },
        'window-min': { type: 'string' },
        json: { type: 'boolean' },
        config: { type: 'string' }
      }, HELP, io);
  if (parsed === null) return 0;
  const values: Values = parsed;
  if (values.site === undefined) throw new UsageError('--site ID is required');
  const instrument = values.instrument;
  if (instrument !== 'imager' && instrument !== 'spectrograph') {
    throw new UsageError(`--instrument ${instrument ?? '(missing)'}: expected imager or spectrograph`);
  }
  const vMag = required('mag', values.mag, -5, 30);
  const rateArcsecPerS = required('rate', values.rate, 0, 3600);
  const rateSigmaArcsecPerS = numberOption('rate-sigma', values['rate-sigma'], 0, 3600) ?? 0;
  const targetSnr = numberOption('snr', values.snr, 0.1, 10_000);
  const airmass = numberOption('airmass', values.airmass, 1, 37) ?? 1;
  const moonSep = numberOption('moon-sep', values['moon-sep'], 0, 180);
  const moonIllum = numberOption('moon-illum', values['moon-illum'], 0, 1);
  if ((moonSep === undefined) !== (moonIllum === undefined)) throw new UsageError('--moon-sep and --moon-illum go together');
  const slitArcsec = numberOption('slit', values.slit, 0.01, 60);
  const windowMin = numberOption('window-min', values['window-min'], 0.1, 24 * 60);
  let diameterRangeM: { minM: number; maxM: number } | undefined;
  if (values['diameter-m'] !== undefined) {
    const parts = values['diameter-m'].split(',').map((x) => Number(x));
    const [minM, maxM] = parts.length === 1 ? [parts[0], parts[0]] : parts;
    if (parts.length > 2 || minM === undefined || maxM === undefined || !(minM > 0) || !(maxM >= minM) || !Number.isFinite(maxM)) {
      throw new UsageError(`--diameter-m ${values['diameter-m']}: expected MIN,MAX in metres with 0 < MIN <= MAX`);
    }
    diameterRangeM = { minM, maxM };
  }

  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  const site = config.sites.find((s) => s.id === values.site);
  if (!site) throw new UsageError(`unknown site "${values.site}" (configured: ${config.sites.map((s) => s.id).join(', ')})`);
  if (instrument === 'spectrograph' && site.spectrograph === undefined) throw new UsageError(`site "${site.id}" has no spectrograph`);
  if (rateArcsecPerS > site.limits.maxRateArcsecPerS) {
    throw new UsageError(
      `--rate ${values.rate}: faster than the mount at "${site.id}" can track (${site.limits.maxRateArcsecPerS} arcsec/s, ` +
        'limits.maxRateArcsecPerS in the configuration); give a rate up to that',
    );
  }
  if (instrument === 'spectrograph' && slitArcsec !== undefined && site.spectrograph && !site.spectrograph.slitWidthsArcsec.includes(slitArcsec)) {
    throw new UsageError(`--slit ${values.slit}: not a slit of the spectrograph at "${site.id}"; give one of ${site.spectrograph.slitWidthsArcsec.join(', ')} (arcsec)`);
  }
  if (values.filter !== undefined && !site.imager.filters.some((x) => x.name === values.filter)) {
    throw new UsageError(`--filter ${values.filter}: not on the imager of "${site.id}" (configured: ${site.imager.filters.map((x) => x.name).join(', ')})`);
  }

  let sky: SkyAtTarget;
  let plans: PlanResult[];
  try {
    sky = skyForCommand(site, airmass, moonSep === undefined || moonIllum === undefined ? null : { separationDeg: moonSep, illuminatedFraction: moonIllum });
    const conditions: ObservingConditions = {
      vMag,
      rateArcsecPerS,
      rateSigmaArcsecPerS,
      airmass,
      skyVMagPerArcsec2: sky.vMagPerArcsec2,
      ...(diameterRangeM === undefined ? {} : { diameterRangeM }),
    };
    const options: PlanOptions = {
      ...(targetSnr === undefined ? {} : { targetSnr }),
      ...(values.filter === undefined ? {} : { filter: values.filter }),
      ...(slitArcsec === undefined ? {} : { slitArcsec }),
      ...(windowMin === undefined ? {} : { windowS: windowMin * 60 }),
    };
    plans =
      instrument === 'spectrograph'
        ? [spectrumPlan(site, conditions, options)]
        : values.filter !== undefined
          ? [photometryPlan(site, conditions, options)]
          : [photometryPlan(site, conditions, options), coloursPlan(site, conditions, options)];
  } catch (err) {
    const option = asOptionError(err, OPTION_OF_FIELD);
    if (option) throw option;
    if (err instanceof PlanConfigError) throw new UsageError(err.message);
    throw err;
  }

  const notes: string[] = [];
  if (rateSigmaArcsecPerS === 0) notes.push('no --rate-sigma: tracking taken as exact, so no smear or drift cap');
  if (values.json) {
    io.stdout(
      `${JSON.stringify(
        {
          siteId: site.id,
          instrument,
          conditions: { vMag, rateArcsecPerS, rateSigmaArcsecPerS, airmass, diameterRangeM: diameterRangeM ?? null },
          sky,
          plans,
          notes,
        },
        null,
        2,
      )}\n`,
    );
  } else {
    const moonText =
      sky.moon === null
        ? 'no Moon'
        : `Moon ${f(sky.moon.illuminatedFraction * 100, 0)} % lit, ${f(sky.moon.separationDeg, 0)} deg away, taken at the target altitude`;
    const lines = [
      `exposure plans at ${site.id} (${site.name}), ${instrument}`,
      `  V ${f(vMag, 2)}, rate ${rateArcsecPerS} arcsec/s (sigma ${rateSigmaArcsecPerS}), airmass ${f(airmass, 2)} (altitude ${f(sky.targetAltitudeDeg, 1)} deg)`,
      `  sky V ${f(sky.vMagPerArcsec2, 2)} mag/arcsec^2 (${moonText})`,
      ...plans.flatMap(formatPlan),
      ...notes.map((n) => `note: ${n}`),
    ];
    io.stdout(`${lines.join('\n')}\n`);
  }
  return plans.every(isNotFeasible) ? 1 : 0;
};
