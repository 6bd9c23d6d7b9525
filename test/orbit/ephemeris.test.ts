import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { AstroTime, Body, CorrectLightTravel, Equator, HelioState, HelioVector, MakeTime, Observer, ObserverVector, Vector } from 'astronomy-engine';
import { stateFromPerihelionElements } from '../../src/orbit/elements.js';
import { astrometricPlace, ephemerisFromElements, observerGeometry } from '../../src/orbit/ephemeris.js';
import { LIGHT_AU_PER_DAY } from '../../src/orbit/constants.js';
import { PerturberTable } from '../../src/orbit/perturbers.js';
import { ttFromTtIso, utcFromTt } from '../../src/orbit/time.js';
import { apparentMagnitudeHG } from '../../src/photometry/magnitudes.js';
import { airmassKastenYoung, horizontalFromIcrs } from '../../src/sky/site.js';

const ARCSEC_PER_DEG = 3600;
const DEG = Math.PI / 180;
const site = { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 }; // invented demo site (config/default.json)

/** Separation of two RA/Dec directions, arcsec. */
function separationArcsec(ra1: number, dec1: number, ra2: number, dec2: number): number {
  const a = [Math.cos(dec1 * DEG) * Math.cos(ra1 * DEG), Math.cos(dec1 * DEG) * Math.sin(ra1 * DEG), Math.sin(dec1 * DEG)];
  const b = [Math.cos(dec2 * DEG) * Math.cos(ra2 * DEG), Math.cos(dec2 * DEG) * Math.sin(ra2 * DEG), Math.sin(dec2 * DEG)];
  const c = [a[1]! * b[2]! - a[2]! * b[1]!, a[2]! * b[0]! - a[0]! * b[2]!, a[0]! * b[1]! - a[1]! * b[0]!];
  return (Math.atan2(Math.hypot(c[0]!, c[1]!, c[2]!), a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!) / DEG) * ARCSEC_PER_DEG;
}

// Meeus, Astronomical Algorithms, 2nd ed., Example 33.b (numbered 33.a in the issue; 32.b in the 1st ed.):
// periodic comet Encke, elements of the mean equinox J2000, 1990 October 6.0 TD, geocentric, light time, no aberration.
describe('comet Encke on 1990 October 6.0 TD (Meeus Example 33.b)', () => {
  const tt = ttFromTtIso('t', '1990-10-06T00:00:00');
  const a = 2.2091404, e = 0.8502196;
  const elements = { qAu: a * (1 - e), e, iDeg: 11.94524, nodeDeg: 334.75006, periDeg: 186.23352, tpTt: ttFromTtIso('T', '1990-10-28T00:00:00') + 0.54502 };
  const s = stateFromPerihelionElements(elements, tt);
  const place = astrometricPlace({ x: s.x, y: s.y, z: s.z }, { x: s.vx, y: s.vy, z: s.vz }, observerGeometry('geocentre', utcFromTt(tt)));

  // Measured: -0.99 arcsec in RA cos Dec and -0.25 arcsec in Dec, the size of the difference between the
  // library's truncated VSOP87 Earth and Meeus's full one (docs/accuracy.md).
  it('gives RA 158.558965 deg within 1.2 arcsec (RA cos Dec) and Dec 19.158495 deg within 0.4 arcsec', () => {
    expect(Math.abs(place.raDeg - 158.558965) * Math.cos(19.158495 * DEG) * 3600).toBeLessThan(1.2);
    expect(Math.abs(place.decDeg - 19.158495) * 3600).toBeLessThan(0.4);
  });
  it('gives elongation 40.51 deg to the book\'s 0.01 deg', () => {
    expect(Math.abs(place.elongationDeg - 40.51)).toBeLessThan(0.005);
  });
});

describe('topocentric parallax', () => {
  const when = new Date('2027-03-04T05:00:00Z');
  const moon = HelioState(Body.Moon, MakeTime(when));
  const r = { x: moon.x, y: moon.y, z: moon.z };
  const v = { x: moon.vx, y: moon.vy, z: moon.vz };
  const topo = astrometricPlace(r, v, observerGeometry(site, when));
  const geo = astrometricPlace(r, v, observerGeometry('geocentre', when));

  it('moves a body at lunar distance by the same angle as astronomy-engine\'s topocentric Moon, within 1 arcsec', () => {
    // Library: geometric J2000 Moon from the site and from the geocentre (Equator, no light time for the Moon).
    const libTopo = Equator(Body.Moon, when, new Observer(site.latDeg, site.lonDeg, site.heightM), false, false);
    const libGeo = Equator(Body.Moon, when, new Observer(0, 0, -6_378_136.6), false, false); // observer at Earth's centre
    const ours = separationArcsec(topo.raDeg, topo.decDeg, geo.raDeg, geo.decDeg);
    const library = separationArcsec(libTopo.ra * 15, libTopo.dec, libGeo.ra * 15, libGeo.dec);
    expect(ours).toBeGreaterThan(0.1 * ARCSEC_PER_DEG); // parallax at lunar distance is up to 0.95 deg
    expect(Math.abs(ours - library)).toBeLessThan(1);
  });

  it("matches astronomy-engine's light-time solver (CorrectLightTravel) for a body at lunar distance, within 0.01 arcsec", () => {
    const time = MakeTime(when);
    const obs = observerGeometry(site, when);
    const lib = CorrectLightTravel((t: AstroTime) => {
      const m = HelioState(Body.Moon, t);
      const sun = HelioState(Body.SSB, t);
      const sunNow = HelioState(Body.SSB, time);
      // Barycentric difference: (Moon - Sun_b)(t') - (observer - Sun_b)(t), with Sun_b = -SSB.
      return new Vector(m.x - sun.x + sunNow.x - obs.position.x, m.y - sun.y + sunNow.y - obs.position.y, m.z - sun.z + sunNow.z - obs.position.z, t);
    }, time);
    const libRa = (Math.atan2(lib.y, lib.x) / DEG + 360) % 360;
    const libDec = Math.atan2(lib.z, Math.hypot(lib.x, lib.y)) / DEG;
    expect(separationArcsec(topo.raDeg, topo.decDeg, libRa, libDec)).toBeLessThan(0.01);
  });
});

describe('light-time iteration', () => {
  it('converges in at most 4 iterations to tau = |rho| / c for bodies from 0.001 to 50 au (property)', () => {
    const observer = observerGeometry('geocentre', new Date('2027-03-04T00:00:00Z'));
    fc.assert(
      fc.property(
        fc.double({ min: 0.001, max: 50, noNaN: true }),
        fc.double({ min: 0, max: 2 * Math.PI, noNaN: true }),
        fc.double({ min: -1.5, max: 1.5, noNaN: true }),
        fc.double({ min: -0.05, max: 0.05, noNaN: true }),
        (distanceAu, lon, lat, speed) => {
          const o = observer.position;
          const r = { x: o.x + distanceAu * Math.cos(lat) * Math.cos(lon), y: o.y + distanceAu * Math.cos(lat) * Math.sin(lon), z: o.z + distanceAu * Math.sin(lat) };
          const v = { x: speed, y: -speed / 2, z: speed / 3 };
          const p = astrometricPlace(r, v, observer);
          return p.lightTimeIterations <= 4 && Math.abs(p.deltaAu / LIGHT_AU_PER_DAY - p.lightTimeDays) < 1e-11;
        },
      ),
    );
  });

  it('names the first non-finite component of a state instead of returning NaN', () => {
    const observer = observerGeometry('geocentre', new Date('2027-03-04T00:00:00Z'));
    expect(() => astrometricPlace({ x: 1, y: Number.NaN, z: 0 }, { x: 0, y: 0.01, z: 0 }, observer)).toThrow(/r\.y/);
    expect(() => astrometricPlace({ x: 1, y: 0, z: 0 }, { x: 0, y: 0.01, z: Infinity }, observer)).toThrow(/v\.z/);
  });
});

describe('sky-plane rates', () => {
  it('equal the finite difference of positions one minute apart, within 0.1 % (Encke, geocentre)', () => {
    const tt = ttFromTtIso('t', '1990-10-06T00:00:00');
    const el = { qAu: 0.3309, e: 0.85, iDeg: 11.9, nodeDeg: 334.8, periDeg: 186.2, tpTt: tt + 22.5 };
    const at = (dt: number) => {
      const s = stateFromPerihelionElements(el, tt + dt);
      return astrometricPlace({ x: s.x, y: s.y, z: s.z }, { x: s.vx, y: s.vy, z: s.vz }, observerGeometry('geocentre', utcFromTt(tt + dt)));
    };
    const h = 60 / 86_400;
    const before = at(-h), mid = at(0), after = at(h);
    const raRate = ((after.raDeg - before.raDeg) * 3600 * Math.cos(mid.decDeg * DEG)) / 120;
    const decRate = ((after.decDeg - before.decDeg) * 3600) / 120;
    expect(Math.abs(mid.raRateArcsecPerS - raRate)).toBeLessThan(1e-3 * Math.abs(raRate));
    expect(Math.abs(mid.decRateArcsecPerS - decRate)).toBeLessThan(1e-3 * Math.abs(decRate));
  });
});

describe('ephemeris rows', () => {
  const tt = ttFromTtIso('t', '2027-03-04T00:00:00');
  const elements = { qAu: 0.9, e: 0.3, iDeg: 6, nodeDeg: 160, periDeg: 30, tpTt: tt - 5 };
  const times = [new Date('2027-03-04T04:00:00Z'), new Date('2027-03-04T10:00:00Z')];
  const rows = ephemerisFromElements(elements, tt, site, times, { photometry: { hMag: 22.1 } });

  it('carry the H-G magnitude of their own r, delta and phase, with G = 0.15 by default (Bowell et al. 1989)', () => {
    for (const row of rows) expect(row.mag).toBeCloseTo(apparentMagnitudeHG(22.1, 0.15, row.r, row.delta, row.phase), 10);
  });

  it('reduce to V = H + 5 log10(r delta) at zero phase (Bowell et al. 1989: Phi1(0) = Phi2(0) = 1)', () => {
    expect(apparentMagnitudeHG(22.1, 0.15, 1.2, 0.3, 0)).toBeCloseTo(22.1 + 5 * Math.log10(1.2 * 0.3), 12);
  });

  it('take altitude and azimuth from the sky module, and airmass from Kasten & Young only above the horizon', () => {
    for (const row of rows) {
      const h = horizontalFromIcrs(site, new Date(row.t), row.ra, row.dec);
      expect(row.alt).toBeCloseTo(h.altDeg, 9);
      expect(row.az).toBeCloseTo(h.azDeg, 9);
      expect(row.airmass).toEqual(row.alt > 0 ? airmassKastenYoung(row.alt) : null);
    }
  });

  it('leave the uncertainty and the magnitude sigma null for a given orbit', () => {
    for (const row of rows) {
      expect(row.unc).toBeNull();
      expect(row.magSigma).toBeNull();
    }
  });

  it('give a null magnitude when H is unknown', () => {
    const plain = ephemerisFromElements(elements, tt, site, times);
    expect(plain.every((row) => row.mag === null)).toBe(true);
  });
});

describe('observer geometry', () => {
  it("places the site at astronomy-engine's ObserverVector (EQJ) from the Earth's centre", () => {
    const when = new Date('2027-03-04T05:00:00Z');
    const g = observerGeometry(site, when);
    const earth = HelioVector(Body.Earth, when);
    const ov = ObserverVector(when, new Observer(site.latDeg, site.lonDeg, site.heightM), false);
    expect(Math.hypot(g.position.x - earth.x - ov.x, g.position.y - earth.y - ov.y, g.position.z - earth.z - ov.z)).toBeLessThan(1e-12);
  });

  it("takes the Earth and the barycentre from a perturber table to 1e-12 au and 1e-11 au/day of astronomy-engine's series over a year", () => {
    const table = new PerturberTable();
    for (let k = 0; k < 120; k++) {
      const when = new Date(Date.parse('2027-01-01T00:00:00Z') + k * 73 * 3600_000);
      const direct = observerGeometry(site, when);
      const fromTable = observerGeometry(site, when, table);
      const d = (a: { x: number; y: number; z: number }, b: { x: number; y: number; z: number }) => Math.hypot(a.x - b.x, a.y - b.y, a.z - b.z);
      expect(d(direct.position, fromTable.position)).toBeLessThan(1e-12);
      expect(d(direct.velocity, fromTable.velocity)).toBeLessThan(1e-11);
      expect(d(direct.sunBarycentricVelocity, fromTable.sunBarycentricVelocity)).toBeLessThan(1e-13);
    }
  });
});
