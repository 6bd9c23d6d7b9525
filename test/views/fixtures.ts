import type { GeodeticLocation, Site } from '../../src/config/schema.js';
import type { HeliocentricState } from '../../src/orbit/elements.js';
import { ensemblePlaces } from '../../src/orbit/ephemeris.js';
import type { ObjectEstimate } from '../../src/orbit/estimate-types.js';
import { estimateFromState } from '../../src/planning/estimate-from-elements.js';
import { assessmentSummary, type AssessmentSummary } from '../../src/planning/assess.js';
import { planObject } from '../../src/planning/plan-object.js';
import { inventState } from '../../src/planning/simulate.js';
import { storedRequest } from '../../src/jobs/stored-request.js';
import type { Store } from '../../src/store/index.js';
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

/** An invented object too far south for either demo site: planned, it gets no request, only reasons. */
export const INVENTED_FAR_SOUTH: InventedObject = { objectId: 'QV27C09', raDeg: 170, decDeg: -72, distanceAu: 0.05, hMag: 24, transverseKmPerS: 7, motionPaDeg: 90 };

const SIDEREAL_YEAR_MS = 365.25636 * 86_400_000;

function stateOf(o: InventedObject, at: Date, scale = 1, paOffsetDeg = 0): HeliocentricState {
  // Moving the RA with the Sun keeps the object where it was against the night sky at the same local time.
  const raShiftDeg = (360 * (at.getTime() - NOW.getTime())) / SIDEREAL_YEAR_MS;
  return inventState({
    timeUtc: at,
    raDeg: (((o.raDeg + raShiftDeg) % 360) + 360) % 360,
    decDeg: o.decDeg,
    distanceAu: o.distanceAu * scale,
    radialKmPerS: -3,
    transverseKmPerS: o.transverseKmPerS * scale,
    motionPaDeg: o.motionPaDeg + paOffsetDeg,
  });
}

/**
 * The estimate of an invented object, discovered 90 min before `at` (default NOW) and placed
 * so the demo sites see it that night; with `members` (true: 40, or a count), an ensemble of neighbouring orbits
 * (distance scaled 0.9..1.1, direction of motion turned up to 0.5 deg) gives the member points.
 */
export function inventedEstimate(o: InventedObject, options: { members?: boolean | number; at?: Date } = {}): ObjectEstimate {
  const at = options.at ?? NOW;
  const firstObservedAt = new Date(at.getTime() - 90 * 60_000).toISOString();
  const base = estimateFromState({ objectId: o.objectId, firstObservedAt, state: stateOf(o, at), hMag: o.hMag });
  if (!options.members) return base;
  const states: HeliocentricState[] = [];
  const count = typeof options.members === 'number' ? options.members : 40;
  for (let i = 0; i < count; i++) states.push(stateOf(o, at, 0.9 + (0.2 * i) / (count - 1), ((i * 7) % 11) / 10 - 0.5));
  return {
    ...base,
    ephemeris: (location, timesUtc, opts) => base.ephemeris(location, timesUtc, opts),
    memberPositions(location: GeodeticLocation, timeUtc: Date, maxMembers = states.length) {
      const places = ensemblePlaces(states.slice(0, maxMembers), location, [timeUtc]);
      return Array.from({ length: places.memberCount }, (_, j) => ({ raDeg: places.raDeg[j]!, decDeg: places.decDeg[j]! }));
    },
  };
}

/** The planner's requests for an estimate at the given sites, as the store takes them. */
export function plannedRequests(estimate: ObjectEstimate, sites: Site[], now = NOW, horizonH = 12): NewRequest[] {
  return plannedAssessment(estimate, sites, now, horizonH).requests;
}

/** The planner's requests and the assessment summary the service stores with them. */
export function plannedAssessment(estimate: ObjectEstimate, sites: Site[], now = NOW, horizonH = 12): { requests: NewRequest[]; summary: AssessmentSummary } {
  const plan = planObject({ estimate, sites, now, horizonH });
  return { requests: plan.sites.flatMap((s) => s.requests.map(storedRequest)), summary: assessmentSummary(estimate, plan) };
}

/**
 * Stores invented objects as the service leaves them after an assessment: a notice each (no
 * observations of its own) and the assessment with its summary and requests.
 */
export function storeAssessed(store: Store, planned: ReadonlyMap<string, { requests: NewRequest[]; summary: unknown }>, options: { sender: string; receivedAt: string; assessedAt: string }): void {
  for (const [objectId, p] of planned) {
    store.notices.recordNotice({
      sender: options.sender,
      noticeId: `n-${objectId}`,
      objectId,
      source: 'test',
      receivedAt: options.receivedAt,
      issuedAt: options.receivedAt,
      raw: '{}',
      kind: 'observations',
      retractionReason: null,
      orbitJson: null,
      observations: [],
    });
    store.requests.saveAssessment({ objectId, createdAt: options.assessedAt, observations: 3, summary: p.summary, requests: p.requests });
  }
}

/** The parts of a request's JSON (GET /v1/requests/{id}, /v1/queue) the picture and page tests compare. */
export interface RequestJson {
  id: string;
  objectId: string;
  kind: string;
  score: number;
  window: { start: string; end: string };
  recommendedStart: string;
  plan: {
    expectedDurationS: number;
    target: { raDeg: number; decDeg: number; uncertainty1Sigma: { majorArcsec: number } | null };
    conditionsAtStart: { altitudeDeg: number; airmass: number };
    ephemeris: { rows: { t: string; ra: number; dec: number; raRate: number; decRate: number; unc: { major: number; minor: number; pa: number } }[] };
  };
}
