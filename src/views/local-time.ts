import type { Site } from '../config/schema.js';

/**
 * The site's local clock for the pictures: civil time in the site's IANA time zone when the
 * configuration names one (the runtime's time-zone database, through Intl), else local mean
 * time, UTC + east longitude / 15 h (the sky module's night rule).
 */

export interface LocalClock {
  /** e.g. "local time, MST (UTC−7)" or "local mean time (UTC−7:10)". */
  label: string;
  /** HH:MM on the local clock. */
  hhmm(t: Date): string;
  /** Local clock minus UTC at `t`, minutes. */
  offsetMin(t: Date): number;
}

const MS_PER_MIN = 60_000;

/** "UTC+9", "UTC−7", "UTC−7:10" for an offset in minutes (the minus sign is U+2212). */
export function utcOffsetLabel(offsetMin: number): string {
  const sign = offsetMin < 0 ? '−' : '+';
  const abs = Math.round(Math.abs(offsetMin));
  const h = Math.floor(abs / 60);
  const m = abs % 60;
  return `UTC${sign}${h}${m === 0 ? '' : `:${String(m).padStart(2, '0')}`}`;
}

const two = (n: number) => String(n).padStart(2, '0');

/** The local clock of `site`, labelled for the instant `at` (the offset may change across a night with daylight saving). */
export function localClock(site: Site, at: Date): LocalClock {
  const zone = site.timeZone;
  if (zone === undefined) {
    const lon = site.location.lonDeg > 180 ? site.location.lonDeg - 360 : site.location.lonDeg;
    const offset = Math.round(lon * 4);
    return {
      label: `local mean time (${utcOffsetLabel(offset)})`,
      offsetMin: () => offset,
      hhmm: (t) => {
        const local = new Date(t.getTime() + offset * MS_PER_MIN);
        return `${two(local.getUTCHours())}:${two(local.getUTCMinutes())}`;
      },
    };
  }
  const parts = new Intl.DateTimeFormat('en-US', {
    timeZone: zone,
    hourCycle: 'h23',
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    second: '2-digit',
  });
  const offsetMin = (t: Date): number => {
    const p = Object.fromEntries(parts.formatToParts(t).map((x) => [x.type, x.value]));
    const wall = Date.UTC(Number(p['year']), Number(p['month']) - 1, Number(p['day']), Number(p['hour']) % 24, Number(p['minute']), Number(p['second']));
    return Math.round((wall - Math.floor(t.getTime() / 1000) * 1000) / MS_PER_MIN);
  };
  const shortName =
    new Intl.DateTimeFormat('en-US', { timeZone: zone, timeZoneName: 'short' }).formatToParts(at).find((x) => x.type === 'timeZoneName')?.value ?? zone;
  const offsetText = utcOffsetLabel(offsetMin(at));
  const named = shortName.startsWith('GMT') || shortName.startsWith('UTC') ? '' : `${shortName} `;
  return {
    label: `local time, ${named}(${offsetText})`.replace(', (', ' ('),
    offsetMin,
    hhmm: (t) => {
      const local = new Date(t.getTime() + offsetMin(t) * MS_PER_MIN);
      return `${two(local.getUTCHours())}:${two(local.getUTCMinutes())}`;
    },
  };
}
