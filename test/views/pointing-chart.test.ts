import * as Astronomy from 'astronomy-engine';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  NORMAL_REGION_SIGMAS,
  panelScales,
  pointingConditions,
  renderPointingChart,
  scaleBarArcsec,
  tangentPlaneArcsec,
  ViewInputError,
  type PointingInput,
} from '../../src/views/pointing-chart.js';
import { demoConfig } from '../helpers.js';
import { overlappingLabels } from './boxes.js';
import { byClass, parseXml, textOf, type XmlElement } from './xml.js';

const ARCSEC_PER_RAD = (180 / Math.PI) * 3600;
const RAD = Math.PI / 180;
const lantern = demoConfig().sites.find((s) => s.id === 'lantern-ridge')!;

/** RA/Dec of a tangent-plane offset (xi east, eta north, arcsec) about (ra0, dec0): the inverse gnomonic projection (Calabretta & Greisen 2002, eq. 5 inverted). */
function fromOffset(ra0: number, dec0: number, xiArcsec: number, etaArcsec: number): { raDeg: number; decDeg: number } {
  const xi = xiArcsec / ARCSEC_PER_RAD;
  const eta = etaArcsec / ARCSEC_PER_RAD;
  const d0 = dec0 * RAD;
  const denom = Math.cos(d0) - eta * Math.sin(d0);
  const ra = ra0 * RAD + Math.atan2(xi, denom);
  const dec = Math.atan2(Math.sin(d0) + eta * Math.cos(d0), Math.hypot(xi, denom));
  return { raDeg: ((ra / RAD) % 360 + 360) % 360, decDeg: dec / RAD };
}

/** Seeded standard normal deviates (a 32-bit linear congruential generator and Box-Muller; invented data for the picture). */
function normals(seed: number): () => number {
  let s = seed >>> 0;
  const uniform = () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return (s + 0.5) / 2 ** 32;
  };
  return () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
}

/** Members drawn from a normal distribution with 1-sigma semi-axes a, b (arcsec) at position angle pa (deg east of north). */
function normalCloud(n: number, a: number, b: number, paDeg: number, seed = 7): { xi: number; eta: number }[] {
  const g = normals(seed);
  const p = paDeg * RAD;
  return Array.from({ length: n }, () => {
    const u = a * g();
    const v = b * g();
    // u along the major axis (toward PA), v across it.
    return { xi: u * Math.sin(p) + v * Math.cos(p), eta: u * Math.cos(p) - v * Math.sin(p) };
  });
}

function input(overrides: Partial<PointingInput> = {}): PointingInput {
  const base: PointingInput = {
    objectId: 'QV27C01',
    siteId: 'lantern-ridge',
    siteName: 'Lantern Ridge Observatory (invented demo site)',
    timeUtc: new Date('2027-03-04T07:00:00Z'),
    timeReason: 'the start of the next window, 07:00–10:00 UTC',
    positionSource: 'estimate',
    raDeg: 150.2,
    decDeg: 22.1,
    raRate: 0.02,
    decRate: 0.01,
    vMag: 17.6,
    unc: { major: 6, minor: 2, pa: 60 },
    members: normalCloud(2000, 6, 2, 60).map((o) => fromOffset(150.2, 22.1, o.xi, o.eta)),
    imagerFieldArcmin: { width: 13.3, height: 13.3 },
    slit: { widthArcsec: 1.5, lengthArcsec: 120, paDeg: 30, paReason: 'the parallactic angle then' },
    searchPattern: null,
    motionS: 1800,
    motionReason: 'the light curve request’s expected 30 min',
    conditions: { altDeg: 55, airmass: 1.22, sunAltDeg: -40, observable: true, why: [], failing: [] },
  };
  return { ...base, ...overrides };
}

const panel = (root: XmlElement, name: 'wide' | 'close') => byClass(root, `panel-${name}`)[0]!;

/** The panel's frame (its first rect) and scale, read from the picture. */
function frame(p: XmlElement): { cx: number; cy: number; pxPerArcsec: number } {
  const rect = p.children.find((c) => c.name === 'rect')!;
  return {
    cx: Number(rect.attrs['x']) + Number(rect.attrs['width']) / 2,
    cy: Number(rect.attrs['y']) + Number(rect.attrs['height']) / 2,
    pxPerArcsec: Number(p.attrs['data-px-per-arcsec']),
  };
}

/** Density cells of a panel at `level` or below (0: the 68 % region; 1: the 99.7 % one). */
function regionCells(p: XmlElement, level: 0 | 1): { x: number; y: number; w: number; h: number }[] {
  return byClass(p, 'density')[0]!
    .children.filter((c) => Number(c.attrs['data-level']) <= level)
    .map((c) => ({ x: Number(c.attrs['x']), y: Number(c.attrs['y']), w: Number(c.attrs['width']) - 0.2, h: Number(c.attrs['height']) - 0.2 }));
}

describe('tangent-plane coordinates (gnomonic projection)', () => {
  const vector = (raDeg: number, decDeg: number) => Astronomy.VectorFromSphere(new Astronomy.Spherical(decDeg, raDeg, 1), Astronomy.MakeTime(new Date(0)));

  it('puts a point at tan(separation) from the centre, separation from astronomy-engine AngleBetween', () => {
    for (const [ra, dec] of [
      [151.1, 23.0],
      [149.0, 21.5],
      [150.2, 25.0],
    ] as const) {
      const { xi, eta } = tangentPlaneArcsec(150.2, 22.1, ra, dec);
      const sepDeg = Astronomy.AngleBetween(vector(150.2, 22.1), vector(ra, dec));
      // Gnomonic: radius = tan(separation); agreement within 1e-6 arcsec.
      expect(Math.hypot(xi, eta)).toBeCloseTo(Math.tan(sepDeg * RAD) * ARCSEC_PER_RAD, 6);
    }
  });

  it('gives the position angle of the offset (east of north) of the spherical formula', () => {
    // tan P = sin dRA / (cos d0 tan d - sin d0 cos dRA) (Meeus, Astronomical Algorithms, position angle; from memory).
    const [ra0, d0, ra, d] = [150.2, 22.1, 150.9, 22.6].map((v) => v * RAD) as [number, number, number, number];
    const expected = Math.atan2(Math.sin(ra - ra0), Math.cos(d0) * Math.tan(d) - Math.sin(d0) * Math.cos(ra - ra0));
    const { xi, eta } = tangentPlaneArcsec(150.2, 22.1, 150.9, 22.6);
    expect(Math.atan2(xi, eta)).toBeCloseTo(expected, 12);
  });

  it('is undone by the inverse projection of the test, to 1e-6 arcsec', () => {
    const back = fromOffset(150.2, 22.1, 1234.5, -987.6);
    const { xi, eta } = tangentPlaneArcsec(150.2, 22.1, back.raDeg, back.decDeg);
    expect(xi).toBeCloseTo(1234.5, 6);
    expect(eta).toBeCloseTo(-987.6, 6);
  });

  it('refuses a point 90 degrees or more from the centre, naming it', () => {
    expect(() => tangentPlaneArcsec(0, 0, 180, 0)).toThrow(/90 deg or more from the tangent point/);
  });
});

describe('the pointing picture', () => {
  it('is well-formed XML with a title, a description, and in both views the density, field, slit, motion, scale bar and compass', () => {
    const root = parseXml(renderPointingChart(input()));
    expect(root.children[0]!.name).toBe('title');
    expect(root.children[1]!.name).toBe('desc');
    for (const cls of ['density', 'imager-field', 'slit', 'motion', 'scale-bar', 'compass']) expect(byClass(root, cls).length, cls).toBe(2);
  });

  it('shades cells whose darkest ones hold at least 68 % of the virtual orbits, and with the lighter ones 99.7 %, counted from the members themselves', () => {
    const members = normalCloud(2000, 6, 2, 60);
    const root = parseXml(renderPointingChart(input({ members: members.map((o) => fromOffset(150.2, 22.1, o.xi, o.eta)) })));
    const close = panel(root, 'close');
    const { cx, cy, pxPerArcsec } = frame(close);
    const inside = (cells: { x: number; y: number; w: number; h: number }[]) =>
      members.filter((o) => {
        const x = cx - o.xi * pxPerArcsec;
        const y = cy - o.eta * pxPerArcsec;
        return cells.some((c) => x >= c.x && x < c.x + c.w && y >= c.y && y < c.y + c.h);
      }).length;
    const held68 = inside(regionCells(close, 0)) / members.length;
    const held997 = inside(regionCells(close, 1)) / members.length;
    expect(held68).toBeGreaterThanOrEqual(0.68);
    expect(held68).toBeLessThan(0.75);
    expect(held997).toBeGreaterThanOrEqual(0.997);
  });

  it('draws a 68 % region of about the area the normal distribution gives its members (pi 1.51^2 a b, chi-square with 2 degrees of freedom)', () => {
    const root = parseXml(renderPointingChart(input()));
    const close = panel(root, 'close');
    const { pxPerArcsec } = frame(close);
    const areaArcsec2 = regionCells(close, 0).reduce((s, c) => s + (c.w * c.h) / pxPerArcsec ** 2, 0);
    const normal = Math.PI * NORMAL_REGION_SIGMAS[0]! ** 2 * 6 * 2;
    // Cells of about four members each and the 3 x 3 smoothing make the region a little larger than the smooth ellipse.
    expect(areaArcsec2 / normal).toBeGreaterThan(0.85);
    expect(areaArcsec2 / normal).toBeLessThan(1.35);
  });

  it('without virtual orbits draws the normal regions of the 1-sigma ellipse: 1.5096 and 3.4086 times its axes', () => {
    const root = parseXml(renderPointingChart(input({ members: null })));
    expect(byClass(root, 'density')).toHaveLength(0);
    // sqrt of the chi-square quantiles with 2 degrees of freedom at 0.68 (2.2789) and 0.997 (11.6183), from -2 ln(1 - p).
    const r68 = byClass(panel(root, 'close'), 'region-68')[0]!;
    const r997 = byClass(panel(root, 'close'), 'region-997')[0]!;
    expect(Number(r68.attrs['data-major-arcsec'])).toBeCloseTo(6 * Math.sqrt(2.2789), 2);
    expect(Number(r997.attrs['data-minor-arcsec'])).toBeCloseTo(2 * Math.sqrt(11.6183), 2);
    expect(textOf(root)).toContain('no virtual orbits at hand');
  });

  it('draws north up and east left: members east of the nominal fall left of the centre, north ones above', () => {
    const east = Array.from({ length: 200 }, (_, k) => fromOffset(150.2, 22.1, 40 + (k % 10) * 0.1, 0));
    const root = parseXml(renderPointingChart(input({ members: east, unc: null })));
    const close = panel(root, 'close');
    const { cx } = frame(close);
    for (const c of regionCells(close, 0)) expect(c.x + c.w).toBeLessThan(cx);
    const north = Array.from({ length: 200 }, (_, k) => fromOffset(150.2, 22.1, 0, 40 + (k % 10) * 0.1));
    const rootN = parseXml(renderPointingChart(input({ members: north, unc: null })));
    const closeN = panel(rootN, 'close');
    for (const c of regionCells(closeN, 0)) expect(c.y + c.h).toBeLessThan(frame(closeN).cy);
  });

  it('turns the slit to its position angle: PA p points to (-sin p, -cos p) on screen', () => {
    for (const pa of [0, 30, 90, 135]) {
      const root = parseXml(renderPointingChart(input({ slit: { widthArcsec: 1.5, lengthArcsec: 120, paDeg: pa, paReason: 'test' } })));
      const slit = byClass(root, 'slit')[0]!;
      const a = Number(/rotate\(([-\d.]+)/.exec(slit.attrs['transform'] ?? '')![1]) * RAD;
      expect(Math.cos(a)).toBeCloseTo(-Math.sin(pa * RAD), 6);
      expect(Math.sin(a)).toBeCloseTo(-Math.cos(pa * RAD), 6);
    }
  });

  it('draws the imager field and the scale bar at each view’s scale', () => {
    const root = parseXml(renderPointingChart(input()));
    for (const p of byClass(root, 'panel')) {
      const pxPerArcsec = Number(p.attrs['data-px-per-arcsec']);
      expect(Number(byClass(p, 'imager-field')[0]!.attrs['width']) / (13.3 * 60)).toBeCloseTo(pxPerArcsec, 4);
      const bar = byClass(p, 'scale-bar')[0]!;
      expect(Number(bar.attrs['data-px']) / Number(bar.attrs['data-arcsec'])).toBeCloseTo(pxPerArcsec, 4);
    }
  });

  it('draws the motion over the request’s duration from the rates', () => {
    const root = parseXml(renderPointingChart(input()));
    const motion = byClass(root, 'motion')[0]!;
    expect(Number(motion.attrs['data-seconds'])).toBe(1800);
    expect(Number(motion.attrs['data-length-arcsec'])).toBeCloseTo(Math.hypot(0.02, 0.01) * 1800, 6);
  });

  it('draws each search pointing at its offset, east to the left', () => {
    const pattern = { offsets: [{ eastArcsec: 0, northArcsec: 0 }, { eastArcsec: 700, northArcsec: 0 }, { eastArcsec: 0, northArcsec: -700 }], fieldArcsec: 798 };
    const root = parseXml(renderPointingChart(input({ searchPattern: pattern })));
    const wide = panel(root, 'wide');
    const { cx, cy, pxPerArcsec } = frame(wide);
    const squares = byClass(wide, 'search-pointing');
    expect(squares).toHaveLength(3);
    const centre = (e: XmlElement) => ({ x: Number(e.attrs['x']) + Number(e.attrs['width']) / 2, y: Number(e.attrs['y']) + Number(e.attrs['height']) / 2 });
    expect(centre(squares[1]!).x).toBeCloseTo(cx - 700 * pxPerArcsec, 1);
    expect(centre(squares[2]!).y).toBeCloseTo(cy + 700 * pxPerArcsec, 1);
    expect(Number(squares[0]!.attrs['width'])).toBeCloseTo(798 * pxPerArcsec, 1);
  });

  it('states the altitude, airmass and Sun altitude at its time', () => {
    const text = textOf(parseXml(renderPointingChart(input())));
    expect(text).toContain('Then: altitude 55°, airmass 1.22, Sun altitude -40°; observable within every hard limit.');
  });

  it('says plainly when the object cannot be observed at its time, and why', () => {
    const conditions = { altDeg: -28.4, airmass: null, sunAltDeg: 48.5, observable: false, why: ['the Sun is up (+48.5°)', 'below the horizon (altitude −28.4°)'], failing: ['Sun at 48.5 deg, night needs it below -12 deg'] };
    const root = parseXml(renderPointingChart(input({ conditions })));
    expect(byClass(root, 'not-observable')[0]).toBeDefined();
    expect(textOf(root)).toContain('NOT OBSERVABLE at 07:00 UTC: the Sun is up (+48.5°); below the horizon (altitude −28.4°).');
    expect(root.attrs['data-observable']).toBe('false');
  });

  it('keeps its labels apart (estimated text boxes) for regions small and large, with and without a search pattern', () => {
    const cases: Partial<PointingInput>[] = [
      {},
      { members: normalCloud(1000, 900, 120, 20).map((o) => fromOffset(150.2, 22.1, o.xi, o.eta)), unc: { major: 900, minor: 120, pa: 20 } },
      { members: null, unc: { major: 0.3, minor: 0.2, pa: 100 }, raRate: 2, decRate: -1 },
      { searchPattern: { offsets: [{ eastArcsec: 0, northArcsec: 0 }, { eastArcsec: 720, northArcsec: 0 }, { eastArcsec: -720, northArcsec: 0 }], fieldArcsec: 798 } },
    ];
    for (const c of cases) expect(overlappingLabels(parseXml(renderPointingChart(input(c))))).toEqual([]);
  });

  it('refuses a non-finite position, naming the field', () => {
    expect(() => renderPointingChart(input({ raDeg: Number.NaN }))).toThrow(ViewInputError);
    expect(() => renderPointingChart(input({ raDeg: Number.NaN }))).toThrow(/raDeg = NaN: expected a finite number/);
  });
});

describe('the two views’ scales', () => {
  it('make the close view at most half as wide as the wide one, whatever the region, field, slit and search pattern', () => {
    const size = fc.double({ min: 0, max: 1e5, noNaN: true });
    fc.assert(
      fc.property(fc.double({ min: 1, max: 1e4, noNaN: true }), size, size, size, size, (field, slitHalf, slitWidth, pattern, region) => {
        const s = panelScales({ halfFieldArcsec: field, slitHalfLengthArcsec: slitHalf, slitWidthArcsec: Math.min(slitWidth, 60), patternReachArcsec: pattern, region997Arcsec: region });
        expect(s.closeArcsec).toBeLessThanOrEqual(s.wideArcsec / 2);
        expect(s.wideArcsec).toBeGreaterThanOrEqual(Math.max(field, region));
      }),
    );
  });

  it('hold the whole 99.7 % region in the close view when it is smaller than the field', () => {
    const s = panelScales({ halfFieldArcsec: 564, slitHalfLengthArcsec: 60, slitWidthArcsec: 1.5, patternReachArcsec: 0, region997Arcsec: 20 });
    expect(s.closeArcsec).toBeCloseTo(24, 9);
    const root = parseXml(renderPointingChart(input({ unc: { major: 900, minor: 120, pa: 20 }, members: normalCloud(1000, 900, 120, 20).map((o) => fromOffset(150.2, 22.1, o.xi, o.eta)) })));
    expect(Number(panel(root, 'close').attrs['data-extent-arcsec'])).toBeLessThanOrEqual(Number(panel(root, 'wide').attrs['data-extent-arcsec']) / 2);
    expect(textOf(root)).toContain('the region’s core (it reaches beyond)');
  });

  it('keep the imager field readable when the object moves far over its request: the arrow leaves the view, its label keeps the length', () => {
    const root = parseXml(renderPointingChart(input({ raRate: 3, decRate: 0.9, motionS: 4 * 3600 })));
    expect(Number(panel(root, 'wide').attrs['data-extent-arcsec'])).toBeLessThan(13.3 * 60);
    expect(Number(byClass(root, 'motion')[0]!.attrs['data-length-arcsec'])).toBeCloseTo(Math.hypot(3, 0.9) * 4 * 3600, 6);
    expect(textOf(panel(root, 'wide'))).toContain(`motion ${((Math.hypot(3, 0.9) * 4 * 3600) / 3600).toFixed(2)}°`);
  });

  it('choose a round scale bar near a quarter of the view', () => {
    expect(scaleBarArcsec(800)).toBe(200);
    expect(scaleBarArcsec(45)).toBe(10);
    expect(scaleBarArcsec(3)).toBe(0.5);
  });
});

describe('the conditions a pointing picture states', () => {
  const time = Astronomy.MakeTime(new Date('2027-03-04T07:00:00Z'));
  const observer = new Astronomy.Observer(lantern.location.latDeg, lantern.location.lonDeg, lantern.location.heightM);

  /** Altitude with refraction of an astrometric J2000 place, via astronomy-engine's precession-nutation and Horizon (no aberration: within 21 arcsec). */
  function referenceAltitude(raDeg: number, decDeg: number): number {
    const j2000 = Astronomy.VectorFromSphere(new Astronomy.Spherical(decDeg, raDeg, 1), time);
    const ofDate = Astronomy.RotateVector(Astronomy.Rotation_EQJ_EQD(time), j2000);
    const eq = Astronomy.EquatorFromVector(ofDate);
    return Astronomy.Horizon(time, observer, eq.ra, eq.dec, 'normal').altitude;
  }

  it('give the target’s altitude of astronomy-engine within 0.01 deg and the airmass of Kasten & Young (1989) at it', () => {
    const c = pointingConditions(lantern, time.date, { raDeg: 150.2, decDeg: 22.1, raRate: 0.01, decRate: 0 });
    const alt = referenceAltitude(150.2, 22.1);
    expect(Math.abs(c.altDeg - alt)).toBeLessThan(0.01);
    // Kasten & Young 1989, Applied Optics 28, 4735: X = 1 / (sin h + 0.50572 (h + 6.07995)^-1.6364), h in degrees.
    const ky = 1 / (Math.sin(c.altDeg * RAD) + 0.50572 * (c.altDeg + 6.07995) ** -1.6364);
    expect(c.airmass!).toBeCloseTo(ky, 6);
  });

  it('give the Sun’s geometric altitude of astronomy-engine within 0.01 deg', () => {
    const c = pointingConditions(lantern, time.date, { raDeg: 150.2, decDeg: 22.1, raRate: 0.01, decRate: 0 });
    const sun = Astronomy.Equator(Astronomy.Body.Sun, time, observer, true, true);
    expect(Math.abs(c.sunAltDeg - Astronomy.Horizon(time, observer, sun.ra, sun.dec).altitude)).toBeLessThan(0.01);
  });

  it('call the object not observable in daylight, naming the Sun first', () => {
    const c = pointingConditions(lantern, new Date('2027-03-04T20:00:00Z'), { raDeg: 150.2, decDeg: 22.1, raRate: 0.01, decRate: 0 });
    expect(c.observable).toBe(false);
    expect(c.why[0]).toMatch(/^the Sun is up \(\+\d+\.\d°\)$/);
  });
});
