/**
 * How soon new data should be assessed, from the notice alone (before any orbit
 * is known). A nearby object moves fast on the sky: the apparent rate is the
 * transverse speed over the distance, so at a typical 10 km/s an object at
 * 0.05 au moves about 11 deg/day and a main-belt object a fraction of a degree
 * (common practice in screening discovery tracklets). Among waiting new data,
 * the fast mover is therefore wanted first.
 */

/** Time allowed to assess an ordinary notice, s: one replan period (config replan schedule's default). */
export const NEW_DATA_ALLOWANCE_S = 600;
/** Apparent rate above which the allowance shrinks in proportion, deg/day. */
export const FAST_RATE_DEG_PER_DAY = 1;
/** The shortest allowance, s. */
export const MIN_ALLOWANCE_S = 30;

const RAD = Math.PI / 180;

/**
 * Apparent rate of a tracklet, deg/day: the great-circle arc between its first
 * and last positions (haversine formula, R. W. Sinnott, Sky & Telescope 68, 159,
 * 1984) over the time between them. Null with fewer than two positions or no
 * time between them. Positions in degrees, times ISO-8601 UTC.
 */
export function trackletRateDegPerDay(positions: readonly { t: string; raDeg: number; decDeg: number }[]): number | null {
  if (positions.length < 2) return null;
  const sorted = [...positions].sort((a, b) => Date.parse(a.t) - Date.parse(b.t));
  const first = sorted[0]!;
  const last = sorted[sorted.length - 1]!;
  const days = (Date.parse(last.t) - Date.parse(first.t)) / 86_400_000;
  if (!(days > 0)) return null;
  const dDec = (last.decDeg - first.decDeg) * RAD;
  const dRa = (last.raDeg - first.raDeg) * RAD;
  const h = Math.sin(dDec / 2) ** 2 + Math.cos(first.decDeg * RAD) * Math.cos(last.decDeg * RAD) * Math.sin(dRa / 2) ** 2;
  const arcDeg = (2 * Math.asin(Math.min(1, Math.sqrt(h)))) / RAD;
  return arcDeg / days;
}

/**
 * Seconds allowed before new data are assessed: NEW_DATA_ALLOWANCE_S, divided by
 * the rate in units of FAST_RATE_DEG_PER_DAY above it, never below MIN_ALLOWANCE_S
 * (a rule of this project, so a fast mover arriving in a burst goes first).
 */
export function newDataAllowanceS(rateDegPerDay: number | null): number {
  if (rateDegPerDay === null || !Number.isFinite(rateDegPerDay) || rateDegPerDay <= FAST_RATE_DEG_PER_DAY) return NEW_DATA_ALLOWANCE_S;
  return Math.max(MIN_ALLOWANCE_S, (NEW_DATA_ALLOWANCE_S * FAST_RATE_DEG_PER_DAY) / rateDegPerDay);
}
