import { readFileSync } from 'node:fs';
import { DEFAULT_CONFIG_PATH, parseConfig } from '../../src/config/load.js';
import type { Site } from '../../src/config/schema.js';
import type { ObjectEstimate } from '../../src/orbit/estimate-types.js';
import { ephemerisFromState, type EphemerisRow } from '../../src/orbit/ephemeris.js';
import type { HeliocentricState } from '../../src/orbit/elements.js';
import { estimateFromState, type AssumedUncertainty } from '../../src/planning/estimate-from-elements.js';
import { inventState, type InventStateInput } from '../../src/planning/simulate.js';

/**
 * Scenarios for the planning tests: sites and objects built here, from invented
 * geometry. The independent checks use the orbit module's ephemeris directly
 * (not the planner's interpolated track) and astronomy-engine for Sun and Moon.
 */

/** The demo configuration's sites (invented), validated by the project's own schema. */
export function demoSites(): Site[] {
  return parseConfig(JSON.parse(readFileSync(DEFAULT_CONFIG_PATH, 'utf8')) as unknown).sites;
}

/** A northern test site (invented, 'Test Moor'): the demo instruments, generous limits, no mask. */
export function northernSite(limits: Partial<Site['limits']> = {}, id = 'test-moor'): Site {
  const base = demoSites()[0]!;
  return {
    ...base,
    id,
    name: 'Test Moor (invented test site)',
    location: { latDeg: 50, lonDeg: 10, heightM: 500 },
    limits: {
      nightSunAltitudeDeg: -12,
      minAltitudeDeg: 20,
      maxAirmass: 3,
      hourAngleH: { min: -12, max: 12 },
      decDeg: { min: -90, max: 90 },
      maxRateArcsecPerS: 100,
      zenithKeepOutDeg: 0,
      sunAvoidanceDeg: 45,
      minMoonSeparationDeg: 0,
      moonSeparationScalesWithIllumination: false,
      ...limits,
    },
  };
}

export interface TestObject {
  state: HeliocentricState;
  hMag: number;
  estimate: ObjectEstimate;
}

/** An object placed by geocentric direction, distance and relative velocity at `place.timeUtc`, with a chosen uncertainty. */
export function testObject(
  objectId: string,
  place: InventStateInput,
  hMag: number,
  firstObservedAt: string,
  uncertainty: Partial<AssumedUncertainty> = { majorArcsec: 0.5, growthArcsecPerH: 0.5 },
): TestObject {
  const state = inventState(place);
  const estimate = estimateFromState({ objectId, firstObservedAt, state, hMag, referenceUtc: place.timeUtc.toISOString(), uncertainty });
  return { state, hMag, estimate };
}

/** Exact rows of the object from a site (orbit module, no interpolation). */
export function exactRows(object: TestObject, site: Site, times: Date[]): EphemerisRow[] {
  return ephemerisFromState(object.state, site.location, times, { photometry: { hMag: object.hMag } });
}

export const NOW = new Date('2027-01-10T17:00:00Z');
