import { loadConfig } from '../config/load.js';
import { LEAP_SECOND_TABLE_INFO } from '../sky/time-scale.js';
import { nightAt, nightToJson, type Night } from '../sky/night.js';
import { asOptionError, LEAP_TABLE_END, outsideLeapSecondTable, parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';
import { UsageError } from './io.js';

/**
 * `nightjar night --site ID --date YYYY-MM-DD [--json] [--config FILE]`: the Sun, twilight, Moon
 * and dark-hours figures of one night at one site. Which night: the one that starts on the evening
 * of the given local date, where local means local mean solar time at the site (UTC + east
 * longitude / 15 h; the configuration has no time zones); events are searched from local mean
 * noon of the date to local mean noon of the next day.
 */
export const HELP = `nightjar night --site ID --date YYYY-MM-DD [--json] [--config FILE]

Prints the night's figures for one site: sunset, dusk and dawn at the site's
configured night Sun altitude (limits.nightSunAltitudeDeg, Sun's centre, no
refraction), sunrise, the dark interval, Moon rises and sets, the Moon's
illuminated fraction and phase angle, and the part of the dark with the Moon up.
All times are ISO-8601 UTC.

Which night: the one that begins on the evening of --date at the site. The date
is taken in local mean solar time (UTC + east longitude / 15 h), and events are
searched from local mean noon of that date to local mean noon of the next day.

Options:
  --site ID       site id from the configuration (required)
  --date DATE     local date YYYY-MM-DD (required)
  --json          print JSON instead of text
  --config FILE   configuration file (default: NIGHTJAR_CONFIG, else the demo)
  -h, --help      show this help`;

function formatText(night: Night, siteName: string): string {
  const t = (d: Date | null) => (d === null ? '(none)' : d.toISOString().replace(/\.\d{3}Z$/, 'Z'));
  const h = (x: number) => `${x.toFixed(2)} h`;
  const row = (label: string, value: string) => `  ${label.padEnd(22)}${value}`;
  const lines = [
    `night of ${night.localDate} at ${night.siteId} (${siteName})`,
    row('sunset', t(night.sunset)),
    row(`dusk (Sun ${night.nightSunAltitudeDeg} deg)`, t(night.dusk)),
    row(`dawn (Sun ${night.nightSunAltitudeDeg} deg)`, t(night.dawn)),
    row('sunrise', t(night.sunrise)),
    row('dark', night.dark === null ? '(none)' : `${t(night.dark.start)} to ${t(night.dark.end)}, ${h(night.darkH)}`),
    row('moon rises', night.moon.rises.length === 0 ? '(none)' : night.moon.rises.map(t).join(', ')),
    row('moon sets', night.moon.sets.length === 0 ? '(none)' : night.moon.sets.map(t).join(', ')),
    row(
      'moon illuminated',
      `${(night.moon.illuminatedFraction * 100).toFixed(1)} % (phase angle ${night.moon.phaseAngleDeg.toFixed(1)} deg, at ${t(night.moon.evaluatedAt)})`,
    ),
    row('moon up in dark', night.moon.upDuringDark.length === 0 ? '(never)' : night.moon.upDuringDark.map((i) => `${t(i.start)} to ${t(i.end)}`).join(', ')),
    row('dark hours', `${h(night.darkH)} (${h(night.moon.moonFreeDarkH)} moon-free, ${h(night.moon.upDuringDarkH)} with the Moon up)`),
  ];
  for (const note of night.notes) lines.push(`  note: ${note}`);
  return `${lines.join('\n')}\n`;
}

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, {
        site: { type: 'string' },
        date: { type: 'string' },
        json: { type: 'boolean' },
        config: { type: 'string' }
      }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
  if (values.site === undefined) throw new UsageError('--site ID is required');
  if (values.date === undefined) throw new UsageError('--date YYYY-MM-DD is required');
  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  const site = config.sites.find((s) => s.id === values.site);
  if (!site) {
    throw new UsageError(`unknown site "${values.site}" (configured: ${config.sites.map((s) => s.id).join(', ')})`);
  }
  // From local mean noon of the date to noon of the next day: within 0h UTC of the date and 36 h after, at any longitude.
  const dayMs = Date.parse(`${values.date}T00:00:00Z`);
  if (/^\d{4}-\d{2}-\d{2}$/.test(values.date) && Number.isFinite(dayMs)) {
    const first = LEAP_SECOND_TABLE_INFO.firstUtc.slice(0, 10);
    const last = new Date(Date.parse(LEAP_SECOND_TABLE_INFO.validUntilUtc) - 36 * 3_600_000).toISOString().slice(0, 10);
    const range = `give a date from ${first} to ${last}`;
    if (outsideLeapSecondTable(dayMs) !== null && dayMs < Date.parse(LEAP_SECOND_TABLE_INFO.firstUtc)) {
      throw new UsageError(`--date ${values.date}: before ${first}, where the leap-second table begins; ${range}`);
    }
    if (outsideLeapSecondTable(dayMs + 36 * 3_600_000) !== null) {
      throw new UsageError(
        `--date ${values.date}: the night ends past ${LEAP_TABLE_END}, where the leap-second table ` +
          `(${LEAP_SECOND_TABLE_INFO.source}, updated ${LEAP_SECOND_TABLE_INFO.updated}) stops being valid; ${range}, ` +
          'or update src/sky/leap-seconds.ts (DEVELOPERS.md, "Keeping the leap-second table current")',
      );
    }
  }
  let night: Night;
  try {
    night = nightAt(site, values.date);
  } catch (err) {
    throw asOptionError(err, { localDate: '--date' }) ?? err;
  }
  io.stdout(values.json ? `${JSON.stringify(nightToJson(night), null, 2)}\n` : formatText(night, site.name));
  return 0;
};
