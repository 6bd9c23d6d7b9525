import { loadConfig } from '../config/load.js';
import type { Notice } from '../intake/notice.js';
import { EstimationFailedError, EstimationInputError } from '../orbit/estimation/index.js';
import { assessObject, estimateSummaryOut, weightsFromConfig } from '../planning/assess.js';
import type { ObjectPlan, PlannedRequest, SitePlan } from '../planning/plan-object.js';
import { readNoticeFile, trackletOf } from './notice-file.js';
import { parseCommandArgs, parseUtcInTable, parseWhole } from './args.js';
import type { CommandMain, CommandIo } from './io.js';
import { UsageError } from './io.js';

/**
 * `nightjar plan`: the whole assessment and plan of one notice without the
 * database: orbit estimation (short-arc ranging, or the orbit block with its
 * default spread), then per configured site the observable windows, exposure
 * sequences, rates, ephemeris tables and scores, or the reasons why not.
 */
export const HELP = `nightjar plan --notice FILE [--site ID] [--now ISO] [--json]
              [--members N] [--seed S] [--config FILE]

Assesses the object of one notice and plans it at every configured site (or
one, with --site) over the planning horizon of the configuration: requests of
kind photometry, colours and spectrum with their window (UTC), recommended
start, expected duration, exposure sequence, non-sidereal rates (arcsec/s, RA
rate times cos Dec), ephemeris table and score with its factors; or, per site,
the reasons in words and numbers why there is none.

The notice is checked as intake checks it, except for its age. Estimates from a
few hours of astrometry are uncertain; this is not an impact prediction.

Options:
  --notice FILE   notice v1 JSON file (required)
  --site ID       plan only this configured site
  --now ISO       the present (ISO-8601 UTC); default the system clock
  --json          print the plan as JSON (the request bodies as stored)
  --members N     virtual orbits in the ensemble (default: planning.members of the config, as the service)
  --seed S        seed of the ensemble's random draws (default: derived from the object id, as the service)
  --config FILE   configuration file (default: NIGHTJAR_CONFIG, else the demo)
  -h, --help      show this help`;






const short = (iso: string) => iso.replace(/:\d{2}\.\d{3}Z$/, 'Z');

function requestText(r: PlannedRequest): string[] {
  const b = r.body;
  const steps = b.sequence.steps
    .map((s) => `${s.filter !== undefined ? `filter ${s.filter}` : `slit ${s.slitArcsec} arcsec`} ${s.count} x ${s.exposureS} s (SNR ${s.expectedSnr}; ${s.limitingFactor})`)
    .join('\n        ');
  const lines = [
    `  ${r.kind}  score ${r.score.toFixed(1)}`,
    `    window ${short(r.windowStart)} .. ${short(r.windowEnd)} (opens: ${b.windowOpensBecause}; closes: ${b.windowClosesBecause})`,
    `    start ${short(r.recommendedStart)}, about ${(r.durationS / 60).toFixed(0)} min; expires ${short(r.expiresAt)}`,
    `    target RA ${b.target.raDeg.toFixed(5)} Dec ${b.target.decDeg.toFixed(5)} deg, V ${b.target.vMag.toFixed(1)}, 3-sigma region ${b.target.region3SigmaAcrossArcsec ?? '-'} arcsec across`,
    `    tracking non-sidereal raRate ${b.tracking.raRateArcsecPerS} decRate ${b.tracking.decRateArcsecPerS} arcsec/s`,
    `    sequence ${steps}`,
  ];
  if (b.searchPattern !== null) lines.push(`    search pattern: ${b.searchPattern.pointings.length} pointings of ${b.searchPattern.fieldArcsec} arcsec`);
  for (const f of b.score.factors) lines.push(`    ${f.name.padEnd(12)} ${f.value.toFixed(3)} x ${f.weight.toFixed(2)}  ${f.why}`);
  lines.push(`    ephemeris: ${b.ephemeris.rows.length} rows every ${b.ephemeris.stepMin} min`);
  return lines;
}

function siteText(s: SitePlan): string[] {
  const lines = [`site ${s.siteId} (${s.siteName})`];
  if (s.windows.length === 0) lines.push('  no observable window');
  for (const w of s.windows) lines.push(`  window ${short(w.start)} .. ${short(w.end)}  ${w.durationMin.toFixed(0)} min  (${w.opensBecause} .. ${w.closesBecause})`);
  for (const r of s.requests) lines.push(...requestText(r));
  for (const reason of s.reasons) lines.push(`  - ${reason}`);
  return lines;
}

function planText(notice: Notice, plan: ObjectPlan, summaryLine: string): string {
  const lines = [
    `plan for ${plan.objectId} (notice ${notice.noticeId}) at ${plan.plannedAt}, horizon ${plan.horizonH} h`,
    summaryLine,
    'estimates from short arcs are uncertain; this is not an impact prediction',
    '',
  ];
  for (const s of plan.sites) lines.push(...siteText(s), '');
  return `${lines.join('\n')}`;
}

interface Options {
  notice?: string | undefined;
  site?: string | undefined;
  now?: string | undefined;
  json?: boolean | undefined;
  members?: string | undefined;
  seed?: string | undefined;
  config?: string | undefined;
  help?: boolean | undefined;
}

export const main: CommandMain = async (argv: string[], io: CommandIo) => {
  const parsed = parseCommandArgs(
    argv,
    {
      notice: { type: 'string' },
      site: { type: 'string' },
      now: { type: 'string' },
      json: { type: 'boolean' },
      members: { type: 'string' },
      seed: { type: 'string' },
      config: { type: 'string' },
    },
    HELP,
    io,
  );
  if (parsed === null) return 0;
  const values: Options = parsed;
  if (values.notice === undefined) throw new UsageError('--notice FILE is required');
  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  // The plan looks planning.horizonH ahead of --now: all of it must lie inside the leap-second table.
  const now = values.now === undefined ? new Date() : parseUtcInTable('--now', values.now, { ms: config.planning.horizonH * 3_600_000, what: `the plan's horizon of ${config.planning.horizonH} h` });
  const members = values.members === undefined ? config.planning.members : parseWhole('--members', values.members, 1, 100_000);
  const seedOption = values.seed === undefined ? undefined : parseWhole('--seed', values.seed, 0, 2 ** 32 - 1);
  const sites = values.site === undefined ? config.sites : config.sites.filter((s) => s.id === values.site);
  if (sites.length === 0) throw new UsageError(`unknown site "${values.site}" (configured: ${config.sites.map((s) => s.id).join(', ')})`);
  const read = readNoticeFile(values.notice, io.cwd);
  if (!read.ok) {
    io.stderr(`nightjar plan: ${read.message}\n`);
    return 1;
  }
  const notice = read.notice;
  if (notice.retracted === true) {
    io.stdout(`notice ${notice.noticeId} retracts ${notice.objectId}: ${notice.reason ?? ''}\nnothing to plan\n`);
    return 0;
  }
  // The same assessment the service runs: estimate, then plan, with the service's seed and weights.
  let assessment;
  try {
    assessment = assessObject({
      objectId: notice.objectId,
      observations: trackletOf(notice),
      orbit: notice.orbit ?? null,
      now,
      sites,
      horizonH: config.planning.horizonH,
      members,
      weights: weightsFromConfig(config.planning.weights),
      rangePrior: config.planning.rangePrior,
      ...(seedOption !== undefined ? { seed: seedOption } : {}),
    });
  } catch (err) {
    if (err instanceof EstimationFailedError || err instanceof EstimationInputError) {
      io.stderr(`nightjar plan: cannot estimate ${notice.objectId}: ${err.message}\n`);
      return 1;
    }
    throw err;
  }
  const plan = assessment.plan;
  const s = assessment.estimateSummary;
  if (values.json) {
    io.stdout(`${JSON.stringify({ noticeId: notice.noticeId, summary: estimateSummaryOut(s), plan }, null, 2)}\n`);
    return 0;
  }
  const h = s.hMag === null ? 'H unknown' : `H ${s.hMag.p50.toFixed(1)} (${s.hMag.p5.toFixed(1)}..${s.hMag.p95.toFixed(1)})`;
  const summaryLine =
    `assessment: ${s.method}, ${s.members} virtual orbits, ${Math.round(s.classFractions.neo * 100)} % with q < 1.3 au, ${h}, ` +
    `closest approach ${s.minGeocentricDistance.lunarDistances.p50.toFixed(1)} lunar distances within ${s.minGeocentricDistance.withinDays} days`;
  io.stdout(`${planText(notice, plan, summaryLine)}\n`);
  return 0;
};
