import { Body, HelioState, MakeTime } from 'astronomy-engine';
import type { HeliocentricState } from '../elements.js';
import { observerGeometries, placeArrays, streamEnsemblePlacesForSites, type EnsemblePlaces, type Viewpoint } from '../ephemeris.js';
import { PerturberTable } from '../perturbers.js';
import { streamEnsemble, type PropagationOptions } from '../propagate.js';
import { utcFromTt } from '../time.js';

/**
 * Batching of an ensemble for propagation. The integrator takes one step size
 * for all members, set by the member closest to a planet; a cloud from a short
 * arc usually holds a few members that pass very near the Earth, and they
 * would set tiny steps for all. Members are therefore sorted by how near their
 * straight-line geocentric track comes to the Earth within `windowDays`
 * (relative to the speed: the encounter time scale) and propagated in batches
 * of `BATCH_SIZE`, so only the batches holding close passers take small steps.
 * The results are the same as one call, member by member.
 */
export const BATCH_SIZE = 128;

/** Member indices ordered from the slowest-changing to the fastest encounter, split into batches. */
export function encounterBatches(states: readonly HeliocentricState[], windowDays: number, batchSize = BATCH_SIZE): number[][] {
  if (states.length === 0) return [];
  const epoch = states[0]!.tt;
  const earth = HelioState(Body.Earth, MakeTime(utcFromTt(epoch)));
  const score = states.map((s) => {
    const dx = s.x - earth.x, dy = s.y - earth.y, dz = s.z - earth.z;
    const wx = s.vx - earth.vx, wy = s.vy - earth.vy, wz = s.vz - earth.vz;
    const w2 = wx * wx + wy * wy + wz * wz;
    const window = Math.abs(windowDays);
    let t = w2 > 0 ? -(dx * wx + dy * wy + dz * wz) / w2 : 0;
    t = Math.min(Math.max(t, -window), window);
    const d = Math.hypot(dx + t * wx, dy + t * wy, dz + t * wz);
    return d / Math.sqrt(w2 || 1e-30);
  });
  const order = states.map((_, i) => i).sort((a, b) => score[b]! - score[a]!);
  const out: number[][] = [];
  for (let i = 0; i < order.length; i += batchSize) out.push(order.slice(i, i + batchSize));
  return out;
}

/** ensemblePlaces in encounter batches (same layout: timeIndex * memberCount + member). */
export function batchedEnsemblePlaces(states: readonly HeliocentricState[], viewpoint: Viewpoint, timesUtc: readonly Date[], windowDays: number, options: PropagationOptions = {}): EnsemblePlaces {
  return batchedEnsemblePlacesForSites(states, [viewpoint], timesUtc, windowDays, options)[0]!;
}

/** As batchedEnsemblePlaces for several viewpoints, each batch propagated once for all of them. */
export function batchedEnsemblePlacesForSites(
  states: readonly HeliocentricState[],
  viewpoints: readonly Viewpoint[],
  timesUtc: readonly Date[],
  windowDays: number,
  options: PropagationOptions = {},
): EnsemblePlaces[] {
  return viewpoints.length === 0 ? [] : gatherBatches(states, viewpoints, timesUtc, windowDays, options);
}

/** The options with a perturber table every batch shares (the caller's, else a new one). */
function withPerturberTable(options: PropagationOptions): PropagationOptions & { perturbers: PerturberTable } {
  return { ...options, perturbers: options.perturbers ?? new PerturberTable(options.perturberNodeDays ?? 0.125) };
}

function gatherBatches(states: readonly HeliocentricState[], viewpoints: readonly Viewpoint[], timesUtc: readonly Date[], windowDays: number, options: PropagationOptions): EnsemblePlaces[] {
  const n = states.length;
  const outs = viewpoints.map(() => placeArrays(n * timesUtc.length));
  // Shared by every batch: the perturbers' nodes and the observer at each time (its Earth from the same table).
  const shared = withPerturberTable(options);
  const observers = observerGeometries(viewpoints, timesUtc, shared.perturbers);
  for (const batch of encounterBatches(states, windowDays)) {
    streamEnsemblePlacesForSites(
      batch.map((i) => states[i]!),
      viewpoints,
      timesUtc,
      (k, v, p) => {
        const out = outs[v]!;
        const base = k * n;
        for (let b = 0; b < batch.length; b++) {
          const j = base + batch[b]!;
          out.raDeg[j] = p.raDeg[b]!;
          out.decDeg[j] = p.decDeg[b]!;
          out.raRateArcsecPerS[j] = p.raRateArcsecPerS[b]!;
          out.decRateArcsecPerS[j] = p.decRateArcsecPerS[b]!;
          out.deltaAu[j] = p.deltaAu[b]!;
          out.rAu[j] = p.rAu[b]!;
          out.phaseDeg[j] = p.phaseDeg[b]!;
          out.elongationDeg[j] = p.elongationDeg[b]!;
        }
      },
      shared,
      observers,
    );
  }
  return outs.map((out) => ({ timesUtc, memberCount: n, ...out }));
}

/**
 * streamEnsemble in encounter batches: `sink(timeIndex, member, position, velocity)`
 * per member (arrays reused; copy what must outlive the call).
 */
export function batchedStream(
  states: readonly HeliocentricState[],
  timesTt: readonly number[],
  windowDays: number,
  sink: (timeIndex: number, member: number, position: Float64Array, velocity: Float64Array, offset: number) => void,
  options: PropagationOptions = {},
): void {
  const shared = withPerturberTable(options);
  for (const batch of encounterBatches(states, windowDays)) {
    streamEnsemble(
      batch.map((i) => states[i]!),
      timesTt,
      (k, pos, vel) => {
        for (let b = 0; b < batch.length; b++) sink(k, batch[b]!, pos, vel, 3 * b);
      },
      shared,
    );
  }
}
