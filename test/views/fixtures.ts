import type { GeodeticLocation, Site } from '../../src/config/schema.js';
import type { HeliocentricState } from '../../src/orbit/elements.js';
import { ensemblePlaces } from '../../src/orbit/ephemeris.js';
import type { ObjectEstimate } from '../../src/orbit/estimate-types.js';
import { estimateFromState } from '../../src/planning/estimate-from-elements.js';
import { planObject } from '../../src/planning/plan-object.js';
import { inventState } from '../../src/planning/simulate.js';
import type { NewRequest } from '../../src/store/requests.js';

/**
 * Invented objects for the picture tests: real orbits (the orbit module propagates them) placed
 * where the demo sites can see them on the night of 2027-03-03/04, planned by the planner.
 */

export const NOW_ISO = '2027-03-04T06:00:00Z';
export const NOW = new Date(NOW_ISO);

export interface InventedObject {
  objectId: string;
  raDeg: number;
  decDeg: number;
  distanceAu: number;
  hMag: number;
  transverseKmPerS: number;
  motionPaDeg: number;
}

export const INVENTED: readonly InventedObject[] = [
  { objectId: 'QV27C01', raDeg: 150, decDeg: 22, distanceAu: 0.04, hMag: 23.5, transverseKmPerS: 8, motionPaDeg: 60 },
  { objectId: 'QV27C02', raDeg: 190, decDeg: 8, distanceAu: 0.12, hMag: 20.5, transverseKmPerS: 6, motionPaDeg: 200 },
  { objectId: 'QV27C03', raDeg: 120, decDeg: 40, distanceAu: 0.02, hMag: 25.5, transverseKmPerS: 10, motionPaDeg: 300 },
];

function stateOf(o: InventedObject, scale = 1, paOffsetDeg = 0): HeliocentricState {
  return inventState({
    timeUtc: NOW,
    raDeg: o.raDeg,
    decDeg: o.decDeg,
    distanceAu: o.distanceAu * scale,
    radialKmPerS: -3,
    transverseKmPerS: o.transverseKmPerS * scale,
    motionPaDeg: o.motionPaDeg + paOffsetDeg,
  });
}

/**
 * The estimate of an invented object; with `members`, a small ensemble of neighbouring orbits
 * (distance scaled 0.9..1.1, direction of motion turned up to 1 deg) gives the member points.
 */
export function inventedEstimate(o: InventedObject, options: { members?: boolean } = {}): ObjectEstimate {
  const base = estimateFromState({ objectId: o.objectId, firstObservedAt: '2027-03-04T04:30:00.000Z', state: stateOf(o), hMag: o.hMag });
  if (!options.members) return base;
  const states: HeliocentricState[] = [];
  for (let i = 0; i < 40; i++) states.push(stateOf(o, 0.9 + (0.2 * i) / 39, ((i * 7) % 11) / 10 - 0.5));
  return {
    ...base,
    ephemeris: base.ephemeris,
    memberPositions(location: GeodeticLocation, timeUtc: Date, maxMembers = states.length) {
      const places = ensemblePlaces(states.slice(0, maxMembers), location, [timeUtc]);
      return Array.from({ length: places.memberCount }, (_, j) => ({ raDeg: places.raDeg[j]!, decDeg: places.decDeg[j]! }));
    },
  };
}

/** The planner's requests for an estimate at the given sites, as the store takes them. */
export function plannedRequests(estimate: ObjectEstimate, sites: Site[], now = NOW, horizonH = 12): NewRequest[] {
  const plan = planObject({ estimate, sites, now, horizonH });
  return plan.sites.flatMap((s) =>
    s.requests.map((r) => ({
      siteId: r.siteId,
      kind: r.kind,
      score: r.score,
      windowStart: r.windowStart,
      windowEnd: r.windowEnd,
      recommendedStart: r.recommendedStart,
      expiresAt: r.expiresAt,
      body: r.body,
    })),
  );
}
