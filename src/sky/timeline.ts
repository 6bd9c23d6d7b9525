import type { Site } from '../config/schema.js';
import { SkyInputError, requireDate, requireFinite } from './errors.js';
import { moonAndSunInFrame, type MoonInFrame, type SunInFrame } from './bodies.js';
import { apparentFromEqd, siteFrameAt, wrapHours12, type SiteFrame, type Vec3 } from './site.js';

/**
 * A site's sky (frame, Sun, Moon) computed exactly at nodes every `nodeStepMinutes` and
 * interpolated in between, so that many targets and many instants can share the expensive
 * part (astronomy-engine's Earth, Sun and Moon theories, precession-nutation).
 *
 * Interpolation: local sidereal time advances at the sidereal rate 1.00273790935 (IERS
 * Conventions); the precession-nutation matrix is held from the earlier node (it changes by
 * < 0.001 arcsec in an hour); the observer's velocity, the apparent Sun and Moon directions of
 * date and the Moon's phase angle are interpolated linearly between nodes. With 20-minute nodes
 * the error is below 0.001 deg for the Sun and about 0.001 deg for the Moon (its topocentric
 * parallax curves by 1 deg x (2 pi 20/1440)^2 / 8); test/sky/timeline.test.ts measures it.
 */

const MS_PER_MIN = 60_000;
const SIDEREAL_PER_SOLAR = 1.00273790935;
/** The longest interval a timeline may cover, days. */
export const MAX_TIMELINE_DAYS = 10;

/** Site-only geometry at an instant, shared by every target checked at that instant. */
export interface SkyAt {
  frame: SiteFrame;
  sun: SunInFrame;
  moon: MoonInFrame;
}

interface SkyNode {
  tMs: number;
  frame: SiteFrame;
  sunEqd: Vec3;
  sunDistanceAu: number;
  moonEqd: Vec3;
  moonDistanceKm: number;
  moonPhaseAngleDeg: number;
}

export interface SkyTimeline {
  readonly siteId: string;
  readonly startMs: number;
  readonly endMs: number;
  readonly nodeStepMs: number;
  readonly nodes: readonly SkyNode[];
}

/** Exact sky (frame, Sun, Moon) at one instant, from astronomy-engine. */
export function skyAt(site: Site, timeUtc: Date): SkyAt {
  const frame = siteFrameAt(site.location, timeUtc);
  const { sun, moon } = moonAndSunInFrame(frame);
  return { frame, sun, moon };
}

/** Builds the exact nodes for [startUtc, endUtc] every `nodeStepMinutes` (1..60, default 20) plus one at the end. */
export function buildSkyTimeline(site: Site, startUtc: Date, endUtc: Date, nodeStepMinutes = 20): SkyTimeline {
  requireDate('startUtc', startUtc);
  requireDate('endUtc', endUtc);
  requireFinite('nodeStepMinutes', nodeStepMinutes, 1, 60);
  const startMs = startUtc.getTime();
  const endMs = endUtc.getTime();
  if (endMs <= startMs) throw new SkyInputError('endUtc', endUtc, `must be after startUtc ${startUtc.toISOString()}`);
  if (endMs - startMs > MAX_TIMELINE_DAYS * 86_400_000) {
    throw new SkyInputError('endUtc', endUtc, `the interval may span at most ${MAX_TIMELINE_DAYS} days`);
  }
  const nodeStepMs = nodeStepMinutes * MS_PER_MIN;
  const nodes: SkyNode[] = [];
  for (let t = startMs; ; t += nodeStepMs) {
    const tMs = Math.min(t, endMs);
    const { frame, sun, moon } = skyAt(site, new Date(tMs));
    nodes.push({
      tMs,
      frame: { timeUtc: frame.timeUtc, latDeg: frame.latDeg, localSiderealTimeH: frame.localSiderealTimeH, eqjToEqd: frame.eqjToEqd, velocityOverC: frame.velocityOverC },
      sunEqd: sun.eqdUnit,
      sunDistanceAu: sun.distanceAu,
      moonEqd: moon.eqdUnit,
      moonDistanceKm: moon.distanceKm,
      moonPhaseAngleDeg: moon.phaseAngleDeg,
    });
    if (tMs >= endMs) break;
  }
  return { siteId: site.id, startMs, endMs, nodeStepMs, nodes };
}

function lerp3(a: Vec3, b: Vec3, f: number): Vec3 {
  return [a[0] + (b[0] - a[0]) * f, a[1] + (b[1] - a[1]) * f, a[2] + (b[2] - a[2]) * f];
}

function unit(v: Vec3): Vec3 {
  const n = Math.hypot(v[0], v[1], v[2]);
  return [v[0] / n, v[1] / n, v[2] / n];
}

/** The sky at `timeUtc` interpolated from the timeline (see the module note); the time must lie inside it. */
export function skyFromTimeline(timeline: SkyTimeline, timeUtc: Date): SkyAt {
  const tMs = timeUtc.getTime();
  if (!(tMs >= timeline.startMs && tMs <= timeline.endMs)) {
    throw new SkyInputError('timeUtc', timeUtc, `outside the sky timeline ${new Date(timeline.startMs).toISOString()}..${new Date(timeline.endMs).toISOString()}`);
  }
  const i = Math.min(Math.floor((tMs - timeline.startMs) / timeline.nodeStepMs), timeline.nodes.length - 2);
  const a = timeline.nodes[Math.max(i, 0)]!;
  const b = timeline.nodes[Math.max(i, 0) + 1] ?? a;
  const span = b.tMs - a.tMs;
  const f = span > 0 ? (tMs - a.tMs) / span : 0;
  const dtH = (tMs - a.tMs) / 3_600_000;
  const frame: SiteFrame = {
    timeUtc,
    latDeg: a.frame.latDeg,
    localSiderealTimeH: wrapHours12(a.frame.localSiderealTimeH + SIDEREAL_PER_SOLAR * dtH - 12) + 12,
    eqjToEqd: a.frame.eqjToEqd,
    velocityOverC: lerp3(a.frame.velocityOverC, b.frame.velocityOverC, f),
  };
  const sun = apparentFromEqd(frame, unit(lerp3(a.sunEqd, b.sunEqd, f)), true);
  const moon = apparentFromEqd(frame, unit(lerp3(a.moonEqd, b.moonEqd, f)), true);
  const phaseAngleDeg = a.moonPhaseAngleDeg + (b.moonPhaseAngleDeg - a.moonPhaseAngleDeg) * f;
  return {
    frame,
    sun: { ...sun, distanceAu: a.sunDistanceAu + (b.sunDistanceAu - a.sunDistanceAu) * f },
    moon: {
      ...moon,
      distanceKm: a.moonDistanceKm + (b.moonDistanceKm - a.moonDistanceKm) * f,
      phaseAngleDeg,
      illuminatedFraction: (1 + Math.cos((phaseAngleDeg * Math.PI) / 180)) / 2,
    },
  };
}
