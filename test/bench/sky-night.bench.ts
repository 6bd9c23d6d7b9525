/**
 * Night figures of the demo sites for a local date against an independent sunrise equation
 * (NOAA solar calculator method, test/sky/noaa-sun.ts).
 * Run: npx tsx test/bench/sky-night.bench.ts [YYYY-MM-DD]
 */
import { loadConfig } from '../../src/config/load.js';
import { nightAt } from '../../src/sky/night.js';
import { noaaSunEvent } from '../sky/noaa-sun.js';

const localDate = process.argv[2] ?? '2027-03-15';
const iso = (d: Date | null) => (d === null ? '(none)' : d.toISOString().replace(/\.\d{3}Z$/, 'Z'));
for (const site of loadConfig({ env: {} }).sites) {
  const night = nightAt(site, localDate);
  const { latDeg, lonDeg } = site.location;
  const alt = site.limits.nightSunAltitudeDeg;
  // The equation works on a UTC day; pick the day whose event falls inside the night's span.
  const inSpan = (h0: number, dir: 1 | -1): Date => {
    for (let k = -1; k <= 2; k++) {
      const day = new Date(night.span.start.getTime() + k * 86_400_000);
      const t = noaaSunEvent(day, latDeg, lonDeg, h0, dir);
      if (t >= night.span.start && t <= night.span.end) return t;
    }
    throw new Error('no event in span');
  };
  const rows: Array<[string, Date | null, Date]> = [
    ['sunset (-0.833 deg)', night.sunset, inSpan(-0.833, -1)],
    [`dusk (${alt} deg)`, night.dusk, inSpan(alt, -1)],
    [`dawn (${alt} deg)`, night.dawn, inSpan(alt, +1)],
    ['sunrise (-0.833 deg)', night.sunrise, inSpan(-0.833, +1)],
  ];
  console.log(`${site.id}, night of ${localDate}`);
  for (const [label, ours, ref] of rows) {
    const diffS = ours === null ? Number.NaN : (ours.getTime() - ref.getTime()) / 1000;
    console.log(`  ${label.padEnd(22)} ours ${iso(ours)}  NOAA ${iso(ref)}  diff ${diffS.toFixed(0)} s`);
  }
  console.log(
    `  dark ${night.darkH.toFixed(3)} h; moon illuminated ${night.moon.illuminatedFraction.toFixed(3)}, phase angle ${night.moon.phaseAngleDeg.toFixed(2)} deg; ` +
      `moon up in dark ${night.moon.upDuringDarkH.toFixed(3)} h; rises ${night.moon.rises.map(iso).join(', ') || '(none)'}; sets ${night.moon.sets.map(iso).join(', ') || '(none)'}`,
  );
}
