import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow, UncertaintyEllipse } from '../orbit/ephemeris.js';
import type { ObjectEstimate } from '../orbit/estimate-types.js';
import { advanceCore, estimateFromCore, packCore, unpackCore, type CoreEstimate, type EnsembleCore, type PackedCore } from '../orbit/estimation/index.js';
import { PerturberTable } from '../orbit/perturbers.js';
import { ttFromUtc, utcFromTt } from '../orbit/time.js';
import { PlanningInputError } from './errors.js';
import { TRACK_SPREAD_EVERY, TRACK_STEP_MIN } from './track.js';

/**
 * Where the planner's ephemeris rows come from. The track is sampled on the
 * whole TRACK_STEP_MIN steps of UTC (not on steps from `now`), so a replan ten
 * minutes later asks for the same sample times and can be given the same rows.
 */
export interface TrackSource {
  /** Rows at every grid time from `startMs` to `endMs` (both on the grid), one list per location, same order. */
  gridRows(locations: readonly GeodeticLocation[], startMs: number, endMs: number): EphemerisRow[][];
  /** Rows at any times for one location (request tables of fast movers): positions at every time, the ensemble every third. */
  rowsAt(location: GeodeticLocation, timesMs: readonly number[]): EphemerisRow[];
}

export const TRACK_STEP_MS = TRACK_STEP_MIN * 60_000;

/** The grid times from `startMs` to `endMs`, both included (they must be on the grid). */
export function gridTimes(startMs: number, endMs: number): Date[] {
  if (startMs % TRACK_STEP_MS !== 0 || endMs % TRACK_STEP_MS !== 0 || endMs < startMs)
    throw new PlanningInputError('track', `${new Date(startMs).toISOString()}..${new Date(endMs).toISOString()}`, `expected times on whole ${TRACK_STEP_MIN}-minute steps of UTC, start before end`);
  const out: Date[] = [];
  for (let t = startMs; t <= endMs; t += TRACK_STEP_MS) out.push(new Date(t));
  return out;
}

/** Rows straight from any estimate: one call for the whole grid (estimates given as elements, tests). */
export function directTrackSource(estimate: ObjectEstimate): TrackSource {
  const options = { spreadEvery: TRACK_SPREAD_EVERY };
  return {
    gridRows(locations, startMs, endMs) {
      const times = gridTimes(startMs, endMs);
      if (estimate.ephemerisForSites && locations.length > 1) return estimate.ephemerisForSites(locations, times, options);
      return locations.map((l) => estimate.ephemeris(l, times, options));
    },
    rowsAt: (location, timesMs) => estimate.ephemeris(location, timesMs.map((t) => new Date(t)), options),
  };
}

/** Length of one piece of the chained track, hours. */
export const CHAIN_PIECE_HOURS = 12;
const PIECE_MS = CHAIN_PIECE_HOURS * 3_600_000;
const STEPS_PER_PIECE = PIECE_MS / TRACK_STEP_MS;

/** A track source whose work can be kept between replans; `memoryBytes` estimates what it holds. */
export interface ChainedTrack extends TrackSource {
  /** The estimate whose ensemble it propagates (summary, and ephemerides from its own epoch). */
  readonly estimate: ObjectEstimate;
  /** The estimate's core, packed (for storing). */
  readonly baseCore: PackedCore;
  /** Drops pieces that end before `ms` (time has moved past them), and boundary ensembles no longer needed. */
  forgetBefore(ms: number): void;
  memoryBytes(): number;
}

/** Numbers per packed row (see packRows). */
const ROW_WIDTH = 21;
const HAS_UNC = 1, HAS_MAG = 2, HAS_MAG_SIGMA = 4, HAS_AIRMASS = 8, HAS_EXTENT = 16;
type Row = EphemerisRow & { extent99?: UncertaintyEllipse | null };

/** Rows as one Float64Array (exact copies; null kept apart by a flag), about 170 bytes a row instead of some 1 100 as objects. */
function packRows(rows: readonly Row[]): Float64Array {
  const out = new Float64Array(rows.length * ROW_WIDTH);
  rows.forEach((row, i) => {
    const o = i * ROW_WIDTH;
    const flags = (row.unc ? HAS_UNC : 0) | (row.mag !== null ? HAS_MAG : 0) | (row.magSigma !== null ? HAS_MAG_SIGMA : 0) | (row.airmass !== null ? HAS_AIRMASS : 0) | (row.extent99 ? HAS_EXTENT : 0);
    out.set(
      [
        flags, Date.parse(row.t), row.ra, row.dec, row.raRate, row.decRate,
        row.unc?.major ?? 0, row.unc?.minor ?? 0, row.unc?.pa ?? 0,
        row.mag ?? 0, row.magSigma ?? 0, row.delta, row.r, row.phase, row.elong, row.alt, row.az, row.airmass ?? 0,
        row.extent99?.major ?? 0, row.extent99?.minor ?? 0, row.extent99?.pa ?? 0,
      ],
      o,
    );
  });
  return out;
}

function unpackRow(p: Float64Array, i: number): Row {
  const o = i * ROW_WIDTH;
  const flags = p[o]!;
  const at = (k: number) => p[o + k]!;
  return {
    t: new Date(at(1)).toISOString(),
    ra: at(2),
    dec: at(3),
    raRate: at(4),
    decRate: at(5),
    unc: flags & HAS_UNC ? { major: at(6), minor: at(7), pa: at(8) } : null,
    mag: flags & HAS_MAG ? at(9) : null,
    magSigma: flags & HAS_MAG_SIGMA ? at(10) : null,
    delta: at(11),
    r: at(12),
    phase: at(13),
    elong: at(14),
    alt: at(15),
    az: at(16),
    airmass: flags & HAS_AIRMASS ? at(17) : null,
    extent99: flags & HAS_EXTENT ? { major: at(18), minor: at(19), pa: at(20) } : null,
  };
}

/**
 * A track propagated in a chain of pieces, so a replan reuses what an earlier
 * one computed and time moving on costs only a new piece at the end.
 *
 * Method: the grid is cut into pieces of CHAIN_PIECE_HOURS starting at
 * k x CHAIN_PIECE_HOURS + `phaseMs` (UTC; the phase spreads different objects'
 * new pieces over the day). The ensemble (nominal and virtual orbits) is moved
 * from the estimate's epoch to the first piece boundary after it, then from
 * each boundary to the next (advanceCore); the rows of a piece come from the
 * ensemble at its starting boundary (estimateFromCore; the piece holding the
 * epoch, and any before it, from the estimate's own core). Every piece is thus
 * a fixed function of the core and the piece's index: computed now or kept
 * from an earlier replan, it is the same rows to the last bit. Each restart of
 * the integration at a boundary changes the positions by the integrator's own
 * error only (test/planning/reuse.test.ts). Kept: the core, the newest
 * boundary ensemble (the chain goes on from it), the rows of pieces not yet
 * past, and for an object whose request tables needed fresh rows (a fast
 * mover) the boundary ensembles of those pieces; all packed.
 */
export function chainedTrackSource(core: EnsembleCore | PackedCore, phaseMs: number): ChainedTrack {
  if (!Number.isInteger(phaseMs / TRACK_STEP_MS) || phaseMs < 0 || phaseMs >= PIECE_MS)
    throw new PlanningInputError('phaseMs', phaseMs, `expected whole ${TRACK_STEP_MIN}-minute steps from 0 to under ${CHAIN_PIECE_HOURS} h`);
  const base: PackedCore = 'orbits' in core ? core : packCore(core);
  const perturbers = new PerturberTable();
  const boundaryMs = (k: number) => k * PIECE_MS + phaseMs;
  const pieceOf = (ms: number) => Math.floor((ms - phaseMs) / PIECE_MS);
  /** The first boundary at or after the epoch: pieces from it on come from the chain. */
  const firstChained = Math.ceil((utcFromTt(base.epochTt).getTime() - phaseMs) / PIECE_MS);
  /** The ensemble at boundaries, by piece index. */
  const cores = new Map<number, PackedCore>();
  /** Rows of each piece (one packed list per location), per location list. */
  const pieces = new Map<string, Map<number, Float64Array[]>>();
  let freshRowsWanted = false;

  function coreAt(k: number): PackedCore {
    if (k < firstChained) return base;
    const kept = cores.get(k);
    if (kept) return kept;
    // From the nearest earlier boundary kept, else from the estimate's own core.
    let from = firstChained - 1;
    for (const j of cores.keys()) if (j < k && j > from) from = j;
    let current = unpackCore(from < firstChained ? base : cores.get(from)!);
    let packed = base;
    for (let j = Math.max(from + 1, firstChained); j <= k; j++) {
      current = advanceCore(current, ttFromUtc(new Date(boundaryMs(j))), perturbers);
      packed = packCore(current);
      cores.set(j, packed);
    }
    return packed;
  }

  const estimateAt = (k: number): CoreEstimate => estimateFromCore(unpackCore(coreAt(k)), perturbers);

  function pieceRows(locations: readonly GeodeticLocation[], k: number, cache: Map<number, CoreEstimate>): Float64Array[] {
    const key = JSON.stringify(locations);
    let byPiece = pieces.get(key);
    if (!byPiece) pieces.set(key, (byPiece = new Map<number, Float64Array[]>()));
    const kept = byPiece.get(k);
    if (kept) return kept;
    const times = Array.from({ length: STEPS_PER_PIECE }, (_, i) => new Date(boundaryMs(k) + i * TRACK_STEP_MS));
    let estimate = cache.get(k);
    if (!estimate) cache.set(k, (estimate = estimateAt(k)));
    const rows = estimate.ephemerisForSites(locations, times, { spreadEvery: TRACK_SPREAD_EVERY }).map(packRows);
    byPiece.set(k, rows);
    return rows;
  }

  let baseEstimate: CoreEstimate | null = null;
  const baseBuilt = () => (baseEstimate ??= estimateFromCore(unpackCore(base), perturbers));
  const estimate: ObjectEstimate = {
    objectId: base.objectId,
    firstObservedAt: base.firstObservedAt,
    summary: base.summary,
    ephemeris: (location, times, options) => baseBuilt().ephemeris(location, times, options),
    ephemerisForSites: (locations, times, options) => baseBuilt().ephemerisForSites(locations, times, options),
  };

  return {
    estimate,
    baseCore: base,
    gridRows(locations, startMs, endMs) {
      const times = gridTimes(startMs, endMs);
      const out: EphemerisRow[][] = locations.map(() => []);
      const built = new Map<number, CoreEstimate>();
      for (const t of times) {
        const k = pieceOf(t.getTime());
        const rows = pieceRows(locations, k, built);
        const i = Math.round((t.getTime() - boundaryMs(k)) / TRACK_STEP_MS);
        rows.forEach((siteRows, s) => out[s]!.push(unpackRow(siteRows, i)));
      }
      return out;
    },
    rowsAt(location, timesMs) {
      freshRowsWanted = true;
      const out = new Array<EphemerisRow>(timesMs.length);
      const byPiece = new Map<number, number[]>();
      timesMs.forEach((t, i) => {
        const k = pieceOf(t);
        byPiece.set(k, [...(byPiece.get(k) ?? []), i]);
      });
      for (const [k, indices] of byPiece) {
        const rows = estimateAt(k).ephemeris(location, indices.map((i) => new Date(timesMs[i]!)), { spreadEvery: TRACK_SPREAD_EVERY });
        indices.forEach((i, j) => (out[i] = rows[j]!));
      }
      return out;
    },
    forgetBefore(ms) {
      const first = pieceOf(ms);
      for (const byPiece of pieces.values()) for (const k of [...byPiece.keys()]) if (k < first) byPiece.delete(k);
      const newest = Math.max(...cores.keys());
      for (const k of [...cores.keys()]) if (k !== newest && (k < first || !freshRowsWanted)) cores.delete(k);
      freshRowsWanted = false;
      baseEstimate = null;
    },
    memoryBytes() {
      let numbers = base.orbits.length + (base.memberH?.length ?? 0);
      for (const c of cores.values()) numbers += c.orbits.length + (c.memberH === base.memberH ? 0 : (c.memberH?.length ?? 0));
      for (const byPiece of pieces.values()) for (const rows of byPiece.values()) for (const r of rows) numbers += r.length;
      // The summary, the residuals and the objects around the arrays: about 40 kB (measured with the heap).
      return numbers * 8 + 40_960;
    },
  };
}
