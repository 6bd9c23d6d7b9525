import { createHash } from 'node:crypto';
import type { Site } from '../config/schema.js';
import type { TrackletObservation } from '../domain/tracklet.js';
import { ESTIMATOR_VERSION } from '../orbit/estimation/index.js';
import { buildSkyTimeline, type SkyTimeline } from '../sky/timeline.js';
import { CHAIN_PIECE_HOURS, TRACK_STEP_MS, type ChainedTrack } from './track-source.js';

/**
 * Reuse of work between assessments of an object whose data have not changed.
 *
 * The orbit estimate depends on the tracklet, the orbit block, the range prior,
 * the number of virtual orbits, the seed, and the instant its close-approach
 * search starts (approachStartFor): estimateKey hashes exactly these, so an
 * estimate kept under a key is the estimate a fresh computation would give.
 * Its propagated ensemble is kept with it (a ChainedTrack) and extended at the
 * end as time moves. The caches here are objects made by their owner (a worker
 * thread keeps one of each); nothing is held at module level.
 */

const DAY_MS = 86_400_000;

/**
 * Where the estimate's close-approach search starts (the estimate's clock):
 * the last position, moved forward in whole days to within a day before `now`;
 * `now` itself without positions. So the search covers at least the 9 days
 * after `now` (of its 10) and the estimate stays the same for a day of replans,
 * each object's day turning at its own hour.
 */
export function approachStartFor(observations: readonly TrackletObservation[], now: Date): Date {
  const last = observations.reduce((m, o) => Math.max(m, Date.parse(o.t)), Number.NEGATIVE_INFINITY);
  if (!Number.isFinite(last) || last >= now.getTime()) return now;
  return new Date(last + Math.floor((now.getTime() - last) / DAY_MS) * DAY_MS);
}

/** Everything an estimate is computed from. */
export interface EstimateKeyParts {
  objectId: string;
  observations: readonly TrackletObservation[];
  orbit: unknown;
  rangePrior: string;
  members: number;
  seed: number;
  approachStart: Date;
  /** Proposals of the sampling when not the default (a first look's). */
  proposals?: number;
}

/** SHA-256 (hex) of the parts in a fixed order: equal keys, equal estimates. */
export function estimateKey(parts: EstimateKeyParts): string {
  const canonical = JSON.stringify([
    `estimate-v${ESTIMATOR_VERSION}`,
    parts.objectId,
    parts.observations.map((o) => [o.t, o.raDeg, o.decDeg, o.sigmaArcsec, o.mag, o.band, o.observer.latDeg, o.observer.lonDeg, o.observer.heightM]),
    parts.orbit ?? null,
    parts.rangePrior,
    parts.members,
    parts.seed,
    parts.approachStart.toISOString(),
    ...(parts.proposals === undefined ? [] : [parts.proposals]),
  ]);
  return createHash('sha256').update(canonical).digest('hex');
}

/** The phase of an object's chained track (ChainedTrack): whole track steps from its seed, so objects extend their tracks at different times. */
export function chainPhaseMs(seed: number): number {
  const steps = (CHAIN_PIECE_HOURS * 3_600_000) / TRACK_STEP_MS;
  return (Math.abs(Math.trunc(seed)) % steps) * TRACK_STEP_MS;
}

export interface TrackCacheFigures {
  entries: number;
  bytes: number;
  hits: number;
  misses: number;
  evictions: number;
}

/** Kept estimates with their tracks, least recently used dropped first beyond `maxBytes` (estimated). */
export interface TrackCache {
  get(key: string): ChainedTrack | undefined;
  /** Keeps (or re-sizes) the track under `key`. */
  set(key: string, track: ChainedTrack): void;
  figures(): TrackCacheFigures;
}

export function createTrackCache(options: { maxBytes: number }): TrackCache {
  const entries = new Map<string, { track: ChainedTrack; bytes: number }>();
  let bytes = 0;
  const figures = { hits: 0, misses: 0, evictions: 0 };
  return {
    get(key) {
      const entry = entries.get(key);
      if (!entry) {
        figures.misses += 1;
        return undefined;
      }
      figures.hits += 1;
      // Most recently used last.
      entries.delete(key);
      entries.set(key, entry);
      return entry.track;
    },
    set(key, track) {
      const old = entries.get(key);
      if (old) {
        bytes -= old.bytes;
        entries.delete(key);
      }
      const size = track.memoryBytes();
      entries.set(key, { track, bytes: size });
      bytes += size;
      for (const [k, e] of entries) {
        if (bytes <= options.maxBytes || k === key) break;
        entries.delete(k);
        bytes -= e.bytes;
        figures.evictions += 1;
      }
    },
    figures: () => ({ entries: entries.size, bytes, ...figures }),
  };
}

/** Sky timelines of the sites over the current grid interval, shared by every object planned in it (a few kept). */
export interface SkyTimelineCache {
  timeline(site: Site, startMs: number, endMs: number): SkyTimeline;
}

export function createSkyTimelineCache(maxEntries = 8): SkyTimelineCache {
  const kept = new Map<string, SkyTimeline>();
  return {
    timeline(site, startMs, endMs) {
      const key = JSON.stringify([site.id, site.location, startMs, endMs]);
      const found = kept.get(key);
      if (found) return found;
      const built = buildSkyTimeline(site, new Date(startMs), new Date(endMs));
      kept.set(key, built);
      while (kept.size > maxEntries) kept.delete(kept.keys().next().value!);
      return built;
    },
  };
}
