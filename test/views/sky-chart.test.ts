import * as Astronomy from 'astronomy-engine';
import { describe, expect, it } from 'vitest';
import { renderSkyChart, scaleBarArcsec, tangentPlaneArcsec, ViewInputError, type SkyChartInput } from '../../src/views/sky-chart.js';
import { byClass, parseXml, textOf, type XmlElement } from './xml.js';

const ARCSEC_PER_RAD = (180 / Math.PI) * 3600;

function input(overrides: Partial<SkyChartInput> = {}): SkyChartInput {
  return {
    objectId: 'QV27C01',
    siteId: 'lantern-ridge',
    siteName: 'Lantern Ridge Observatory (invented demo site)',
    timeUtc: new Date('2027-03-04T07:00:00Z'),
    positionSource: 'estimate',
    raDeg: 150.2,
    decDeg: 22.1,
    raRate: 0.2,
    decRate: 0.1,
    vMag: 17.6,
    unc: { major: 6, minor: 2, pa: 60 },
    members: [
      { raDeg: 150.2 + 10 / 3600 / Math.cos(22.1 * (Math.PI / 180)), decDeg: 22.1 },
      { raDeg: 150.2, decDeg: 22.1 + 10 / 3600 },
    ],
    imagerFieldArcmin: { width: 13.3, height: 13.3 },
    slit: { widthArcsec: 1.5, lengthArcsec: 120, paDeg: 30, paReason: 'parallactic angle at t' },
    ...overrides,
  };
}

const vector = (raDeg: number, decDeg: number) => Astronomy.VectorFromSphere(new Astronomy.Spherical(decDeg, raDeg, 1), Astronomy.MakeTime(new Date(0)));

/** The screen direction an element's `rotate(a cx cy)` turns the x axis onto. */
function rotationDirection(e: XmlElement): { dx: number; dy: number } {
  const a = Number(/rotate\(([-\d.]+)/.exec(e.attrs['transform'] ?? '')![1]) * (Math.PI / 180);
  return { dx: Math.cos(a), dy: Math.sin(a) };
}

describe('tangent-plane coordinates (gnomonic projection)', () => {
  it('puts a point at tan(separation) from the centre, separation from astronomy-engine AngleBetween', () => {
    for (const [ra, dec] of [
      [151.1, 23.0],
      [149.0, 21.5],
      [150.2, 25.0],
    ] as const) {
      const { xi, eta } = tangentPlaneArcsec(150.2, 22.1, ra, dec);
      const sepDeg = Astronomy.AngleBetween(vector(150.2, 22.1), vector(ra, dec));
      // Gnomonic: radius = tan(separation); agreement within 1e-6 arcsec.
      expect(Math.hypot(xi, eta)).toBeCloseTo(Math.tan(sepDeg * (Math.PI / 180)) * ARCSEC_PER_RAD, 6);
    }
  });

  it('gives the position angle of the offset (east of north) of the spherical formula', () => {
    // tan P = sin dRA / (cos d0 tan d - sin d0 cos dRA) (Meeus, Astronomical Algorithms, position angle; from memory).
    const [ra0, d0, ra, d] = [150.2, 22.1, 150.9, 22.6].map((v) => v * (Math.PI / 180)) as [number, number, number, number];
    const expected = Math.atan2(Math.sin(ra - ra0), Math.cos(d0) * Math.tan(d) - Math.sin(d0) * Math.cos(ra - ra0));
    const { xi, eta } = tangentPlaneArcsec(150.2, 22.1, 150.9, 22.6);
    expect(Math.atan2(xi, eta)).toBeCloseTo(expected, 12);
  });

  it('reduces to (dRA cos Dec, dDec) for a small offset', () => {
    const { xi, eta } = tangentPlaneArcsec(150.2, 22.1, 150.2 + 1 / 3600, 22.1 + 2 / 3600);
    expect(xi).toBeCloseTo(Math.cos(22.1 * (Math.PI / 180)), 4);
    expect(eta).toBeCloseTo(2, 4);
  });

  it('refuses a point 90 degrees or more from the centre, naming it', () => {
    expect(() => tangentPlaneArcsec(0, 0, 180, 0)).toThrow(/90 deg or more from the tangent point/);
  });
});

describe('the sky picture', () => {
  it('is well-formed XML with a title, a description, both ellipses, the field, the slit and the motion', () => {
    const root = parseXml(renderSkyChart(input()));
    expect(root.children[0]!.name).toBe('title');
    expect(root.children[1]!.name).toBe('desc');
    for (const cls of ['sigma-1', 'sigma-3', 'imager-field', 'slit', 'motion', 'scale-bar', 'compass']) expect(byClass(root, cls).length, cls).toBe(2);
  });

  it('carries the ellipse semi-axes and position angle it draws, 3 sigma being three times 1 sigma', () => {
    const root = parseXml(renderSkyChart(input()));
    const one = byClass(root, 'sigma-1')[0]!;
    const three = byClass(root, 'sigma-3')[0]!;
    expect(Number(one.attrs['data-major-arcsec'])).toBe(6);
    expect(Number(one.attrs['data-minor-arcsec'])).toBe(2);
    expect(Number(one.attrs['data-pa-deg'])).toBe(60);
    expect(Number(three.attrs['data-major-arcsec'])).toBe(18);
    expect(Number(three.attrs['data-minor-arcsec'])).toBe(6);
  });

  it('draws north up and east left: a position angle p points to (-sin p, -cos p) on screen', () => {
    for (const pa of [0, 30, 90, 135]) {
      const root = parseXml(renderSkyChart(input({ unc: { major: 6, minor: 2, pa } })));
      const { dx, dy } = rotationDirection(byClass(root, 'sigma-1')[0]!);
      const p = pa * (Math.PI / 180);
      expect(dx).toBeCloseTo(-Math.sin(p), 6);
      expect(dy).toBeCloseTo(-Math.cos(p), 6);
    }
  });

  it('puts a virtual orbit east of the nominal place left of the centre and one north of it above', () => {
    const root = parseXml(renderSkyChart(input()));
    const close = byClass(root, 'panel-close')[0]!;
    const [east, north] = byClass(close, 'members')[0]!.children;
    const centre = byClass(close, 'sigma-1')[0]!;
    const cx = Number(centre.attrs['cx']);
    const cy = Number(centre.attrs['cy']);
    expect(Number(east!.attrs['cx'])).toBeLessThan(cx - 5);
    expect(Math.abs(Number(east!.attrs['cy']) - cy)).toBeLessThan(0.5);
    expect(Number(north!.attrs['cy'])).toBeLessThan(cy - 5);
  });

  it('draws the imager field and the scale bar at the same scale', () => {
    const root = parseXml(renderSkyChart(input()));
    for (const panel of byClass(root, 'panel')) {
      const pxPerArcsec = Number(panel.attrs['data-px-per-arcsec']);
      const field = byClass(panel, 'imager-field')[0]!;
      expect(Number(field.attrs['width']) / (13.3 * 60)).toBeCloseTo(pxPerArcsec, 4);
      const bar = byClass(panel, 'scale-bar')[0]!;
      expect(Number(bar.attrs['data-px']) / Number(bar.attrs['data-arcsec'])).toBeCloseTo(pxPerArcsec, 4);
    }
  });

  it('draws the motion over 10 minutes from the rates', () => {
    const root = parseXml(renderSkyChart(input()));
    const motion = byClass(root, 'motion')[0]!;
    expect(Number(motion.attrs['data-length-arcsec'])).toBeCloseTo(Math.hypot(0.2, 0.1) * 600, 3);
  });

  it('says in the picture that member points are not available when the estimate has none', () => {
    const root = parseXml(renderSkyChart(input({ members: null })));
    expect(byClass(root, 'members')).toHaveLength(0);
    expect(textOf(root)).toContain('Virtual-orbit points are not available');
  });

  it('refuses a non-finite position, naming the field', () => {
    expect(() => renderSkyChart(input({ raDeg: Number.NaN }))).toThrow(ViewInputError);
    expect(() => renderSkyChart(input({ raDeg: Number.NaN }))).toThrow(/raDeg = NaN: expected a finite number/);
  });

  it('chooses a round scale bar near a quarter of the view', () => {
    expect(scaleBarArcsec(800)).toBe(200);
    expect(scaleBarArcsec(45)).toBe(10);
    expect(scaleBarArcsec(3)).toBe(0.5);
  });
});
