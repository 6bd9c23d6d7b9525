import type { EphemerisRow, UncertaintyEllipse } from '../orbit/ephemeris.js';
import type { TrackSource } from './track-source.js';

/**
 * The first look: a cheaper assessment of a new object taken while new data
 * wait in a backlog, refined by the full assessment when the queue has room.
 * Fewer virtual orbits (`members`) make the estimate and above all the
 * propagated track cheaper, and it plans the next `horizonH` hours only. They
 * are drawn from as many proposals as the full estimate's (`proposals`), so a
 * tail of the posterior holding a few percent is sampled as well (with only
 * two proposals per member such a tail was missed and the region came out too
 * narrow: docs/performance.md). A smaller sample still misses some of the ensemble's spread, so every uncertainty
 * ellipse of the first look is widened by `widen`, chosen on the reference
 * generator so that no region a request can carry within that horizon is
 * narrower than the full estimate's 3-sigma region (test/bench/first-look.bench.ts,
 * docs/performance.md; beyond a day a few members passing near the Earth can
 * widen the full ensemble several times, which no fixed factor follows). Its requests say so in their notes and
 * `assessment.firstLook`, and the full assessment revises them in place.
 */
export const FIRST_LOOK = { members: 250, proposals: 2000, widen: 2, horizonH: 12 } as const;

/** What the planner writes about a first look. */
export interface FirstLookInfo {
  members: number;
  widenedBy: number;
  /** Hours planned. */
  horizonH: number;
}

/** The note a first look's summary and requests carry. */
export function firstLookNote(info: FirstLookInfo, fullMembers: number): string {
  return `first look: ${info.members} virtual orbits instead of ${fullMembers} while new data wait, uncertainty regions widened ${info.widenedBy} times, the next ${info.horizonH} h planned; the full estimate revises these requests`;
}

type Row = EphemerisRow & { extent99?: UncertaintyEllipse | null };
const widened = (e: UncertaintyEllipse | null | undefined, factor: number): UncertaintyEllipse | null =>
  e ? { major: e.major * factor, minor: e.minor * factor, pa: e.pa } : null;

/** The rows of `source` with every uncertainty ellipse (1-sigma, and the 99 % extent when present) scaled by `factor`. */
export function widenedTrackSource(source: TrackSource, factor: number): TrackSource {
  const widen = (row: Row): Row => ({ ...row, unc: widened(row.unc, factor), ...('extent99' in row ? { extent99: widened(row.extent99, factor) } : {}) });
  return {
    gridRows: (locations, startMs, endMs) => source.gridRows(locations, startMs, endMs).map((rows) => rows.map(widen)),
    rowsAt: (location, timesMs) => source.rowsAt(location, timesMs).map(widen),
  };
}
