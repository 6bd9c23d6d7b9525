import { PhotometryInputError, requireFinite, requireInRange, requirePositive } from './errors.js';

/**
 * Asteroid magnitudes: the IAU H-G phase function, the H,G12 system, band
 * offsets from V, and diameter from H and albedo. Pure functions; angles in
 * degrees at the edge, radians inside; distances in au; magnitudes V unless a
 * band is named.
 */

const DEG = Math.PI / 180;

/** Highest phase angle accepted, deg; at 180 deg the phase functions vanish and V is infinite. */
export const MAX_PHASE_DEG = 179.9;

function checkGeometry(rAu: number, deltaAu: number, phaseDeg: number): void {
  requirePositive('rAu (heliocentric distance, au)', rAu);
  requirePositive('deltaAu (observer distance, au)', deltaAu);
  requireInRange('phaseDeg (Sun-object-observer angle, deg)', phaseDeg, 0, MAX_PHASE_DEG);
}

/** A_i and B_i of the approximate H-G phase functions (Bowell et al. 1989), shared by the scalar and ensemble forms. */
const HG_A1 = 3.33, HG_B1 = 0.63, HG_A2 = 1.87, HG_B2 = 1.22;

/** The two basis phase functions of the H-G system at one phase angle. */
export interface PhaseFunctionsHG {
  phi1: number;
  phi2: number;
}

/**
 * Phi1 and Phi2 of the IAU H-G system, by the exponential approximations
 * published with it: Phi_i = exp(-A_i tan(alpha/2)^B_i), A1 = 3.33, B1 = 0.63,
 * A2 = 1.87, B2 = 1.22 (Bowell et al. 1989, Asteroids II, p. 524-556; the form
 * the IAU adopted in 1985 and that Meeus, Astronomical Algorithms, ch. 33 gives).
 * Valid for phase 0-120 deg; beyond it the form is extrapolated. Both equal 1 at 0 deg.
 */
export function phaseFunctionsHG(phaseDeg: number): PhaseFunctionsHG {
  requireInRange('phaseDeg (Sun-object-observer angle, deg)', phaseDeg, 0, MAX_PHASE_DEG);
  const tanHalf = Math.tan((phaseDeg * DEG) / 2);
  return {
    phi1: Math.exp(-HG_A1 * Math.pow(tanHalf, HG_B1)),
    phi2: Math.exp(-HG_A2 * Math.pow(tanHalf, HG_B2)),
  };
}

/**
 * Phi1 and Phi2 in the full form of Bowell et al. (1989): a blend, weighted by
 * W = exp(-90.56 tan^2(alpha/2)), of a smooth part 1 - C sin(alpha)/(0.119 +
 * 1.341 sin(alpha) - 0.754 sin^2(alpha)) near opposition and the exponential
 * part with A1 = 3.332, B1 = 0.631, C1 = 0.986, A2 = 1.862, B2 = 1.218, C2 = 0.238.
 * Bowell et al. (1989), eq. A4; used to bound the error of the approximation
 * in phaseFunctionsHG.
 */
export function phaseFunctionsHGFull(phaseDeg: number): PhaseFunctionsHG {
  requireInRange('phaseDeg (Sun-object-observer angle, deg)', phaseDeg, 0, MAX_PHASE_DEG);
  const alpha = phaseDeg * DEG;
  const tanHalf = Math.tan(alpha / 2);
  const sinA = Math.sin(alpha);
  const weight = Math.exp(-90.56 * tanHalf * tanHalf);
  const smooth = (c: number): number => 1 - (c * sinA) / (0.119 + 1.341 * sinA - 0.754 * sinA * sinA);
  const linear = (a: number, b: number): number => Math.exp(-a * Math.pow(tanHalf, b));
  return {
    phi1: weight * smooth(0.986) + (1 - weight) * linear(3.332, 0.631),
    phi2: weight * smooth(0.238) + (1 - weight) * linear(1.862, 1.218),
  };
}

/**
 * Magnitude change from opposition, mag: -2.5 log10[(1 - G) Phi1 + G Phi2]
 * (IAU H-G, Bowell et al. 1989). Zero at phase 0, positive (fainter) beyond.
 */
export function phaseTermHG(g: number, phaseDeg: number): number {
  requireInRange('g (H-G slope parameter)', g, -0.5, 1.5);
  const { phi1, phi2 } = phaseFunctionsHG(phaseDeg);
  const blend = (1 - g) * phi1 + g * phi2;
  if (!(blend > 0)) {
    throw new PhotometryInputError('g (H-G slope parameter)', g, `gives a non-positive phase function at ${phaseDeg} deg`);
  }
  return -2.5 * Math.log10(blend);
}

/**
 * Apparent V magnitude from H and G (IAU H-G system, Bowell et al. 1989):
 * V = H + 5 log10(r Delta) - 2.5 log10[(1 - G) Phi1 + G Phi2].
 * rAu: heliocentric distance, au; deltaAu: distance from the observer, au;
 * phaseDeg: Sun-object-observer angle, deg. Returns V, mag. The phase
 * functions use the published approximations (phaseFunctionsHG).
 */
export function apparentMagnitudeHG(hMag: number, g: number, rAu: number, deltaAu: number, phaseDeg: number): number {
  requireFinite('hMag (absolute magnitude)', hMag);
  checkGeometry(rAu, deltaAu, phaseDeg);
  return hMag + 5 * Math.log10(rAu * deltaAu) + phaseTermHG(g, phaseDeg);
}

const LOG10_SCALE_2_5 = 2.5 / Math.LN10;

/**
 * apparentMagnitudeHG for many members at once (the same formula and phase
 * functions, Bowell et al. 1989): out[m] = V, mag, of member m in [0, count)
 * with H hMag[m] and geometry rAu[offset + m], deltaAu[offset + m] (au) and
 * phaseDeg[offset + m] (deg), as laid out in an ensemble's place arrays.
 * G is checked once; a geometry outside the model's range (non-positive
 * distance, phase beyond MAX_PHASE_DEG) or a non-finite H gives NaN instead of
 * an error, so one odd member does not stop an ensemble. Returns how many
 * values are finite.
 */
export function apparentMagnitudesHG(
  hMag: ArrayLike<number>,
  g: number,
  rAu: ArrayLike<number>,
  deltaAu: ArrayLike<number>,
  phaseDeg: ArrayLike<number>,
  offset: number,
  count: number,
  out: Float64Array,
): number {
  requireInRange('g (H-G slope parameter)', g, -0.5, 1.5);
  let finite = 0;
  for (let m = 0; m < count; m++) {
    const h = hMag[m]!, r = rAu[offset + m]!, d = deltaAu[offset + m]!, phase = phaseDeg[offset + m]!;
    if (!Number.isFinite(h) || !(r > 0) || !(d > 0) || !(phase >= 0 && phase <= MAX_PHASE_DEG)) {
      out[m] = Number.NaN;
      continue;
    }
    // tan^B as exp(B ln tan), and one logarithm for distance and phase terms: V = H + 2.5 log10((r Delta)^2 / blend).
    const logTan = Math.log(Math.tan((phase * DEG) / 2));
    const blend = phase === 0 ? 1 : (1 - g) * Math.exp(-HG_A1 * Math.exp(HG_B1 * logTan)) + g * Math.exp(-HG_A2 * Math.exp(HG_B2 * logTan));
    const rd = r * d;
    const v = blend > 0 ? h + LOG10_SCALE_2_5 * Math.log((rd * rd) / blend) : Number.NaN;
    out[m] = v;
    if (Number.isFinite(v)) finite++;
  }
  return finite;
}

/** Mean colours of asteroids: magnitude in a band minus V, mag, by band name. */
export type BandOffsets = Readonly<Record<string, number>>;

/**
 * Default band offsets (m_band - V) for a typical near-Earth asteroid, a mix of
 * S and C types. Johnson-Cousins values follow the mean NEO colours V-R about
 * 0.45 and B-V about 0.84, V-I about 0.80 (Dandy et al. 2003, Icarus 163, 363;
 * values from memory); SDSS-like g, r, i, z follow the mean asteroid colours of
 * the SDSS Moving Object Catalogue (Ivezic et al. 2001, AJ 122, 2749: g-r about
 * 0.55, r-i about 0.13, i-z about -0.02) converted to V with V = g - 0.59(g-r)
 * - 0.01 (Jester et al. 2005, AJ 130, 873). All from memory; individual objects
 * differ by up to about 0.15 mag, and that is the accuracy to expect.
 * Callers may pass their own table (the config may carry one).
 */
export const DEFAULT_BAND_OFFSETS: BandOffsets = Object.freeze({
  V: 0,
  B: 0.84,
  R: -0.45,
  I: -0.8,
  g: 0.33,
  r: -0.22,
  i: -0.35,
  z: -0.33,
});

/**
 * Magnitude in a named band from V: m_band = V + offset[band] (mean asteroid
 * colours, DEFAULT_BAND_OFFSETS unless `offsets` is given). Throws for a band
 * missing from the table.
 */
export function magnitudeInBand(vMag: number, band: string, offsets: BandOffsets = DEFAULT_BAND_OFFSETS): number {
  requireFinite('vMag', vMag);
  return vMag + bandOffsetFromV(band, offsets);
}

/** The offset m_band - V for a band, mag; throws when the band is not in the table. */
export function bandOffsetFromV(band: string, offsets: BandOffsets = DEFAULT_BAND_OFFSETS): number {
  const offset = Object.prototype.hasOwnProperty.call(offsets, band) ? offsets[band] : undefined;
  if (offset === undefined) {
    throw new PhotometryInputError('band', band, `no colour offset from V is known; known bands: ${Object.keys(offsets).join(', ')}`);
  }
  requireFinite(`band offset for ${band}`, offset);
  return offset;
}

/**
 * Absolute magnitude H from an observed magnitude and the geometry, by
 * inverting the H-G relation (Bowell et al. 1989):
 * H = V - 5 log10(r Delta) + 2.5 log10[(1 - G) Phi1 + G Phi2].
 * A magnitude in another band is first reduced to V with the band offsets.
 */
export function absoluteMagnitudeFromObserved(
  observedMag: number,
  g: number,
  rAu: number,
  deltaAu: number,
  phaseDeg: number,
  options: { band?: string; bandOffsets?: BandOffsets } = {},
): number {
  requireFinite('observedMag', observedMag);
  checkGeometry(rAu, deltaAu, phaseDeg);
  const vMag = options.band === undefined ? observedMag : observedMag - bandOffsetFromV(options.band, options.bandOffsets);
  return vMag - 5 * Math.log10(rAu * deltaAu) - phaseTermHG(g, phaseDeg);
}

// ---- H, G12 (Muinonen et al. 2010) ----

/** A piecewise cubic Hermite curve: values and first derivatives (per radian) at nodes (radians). */
interface HermiteTable {
  readonly x: readonly number[];
  readonly y: readonly number[];
  readonly dy: readonly number[];
}

/** Cubic Hermite interpolation between the bracketing nodes (the basis functions are defined this way). */
function evaluateHermite(table: HermiteTable, xv: number): number {
  let i = 0;
  while (i < table.x.length - 2 && xv > (table.x[i + 1] as number)) i++;
  const x0 = table.x[i] as number;
  const x1 = table.x[i + 1] as number;
  const y0 = table.y[i] as number;
  const y1 = table.y[i + 1] as number;
  const h = x1 - x0;
  const d0 = (table.dy[i] as number) * h;
  const d1 = (table.dy[i + 1] as number) * h;
  const t = (xv - x0) / h;
  const t2 = t * t;
  const t3 = t2 * t;
  return (2 * t3 - 3 * t2 + 1) * y0 + (t3 - 2 * t2 + t) * d0 + (-2 * t3 + 3 * t2) * y1 + (t3 - t2) * d1;
}

const rad = (degrees: readonly number[]): readonly number[] => Object.freeze(degrees.map((d) => d * DEG));

// Node values and derivatives (per radian) of the basis functions, Muinonen et al. (2010), Icarus 209, 542, appendix tables.
const PHI1_TABLE: HermiteTable = Object.freeze({
  x: rad([7.5, 30, 60, 90, 120, 150]),
  y: Object.freeze([7.5e-1, 3.3486016e-1, 1.341056e-1, 5.1104756e-2, 2.1465687e-2, 3.6396989e-3]),
  dy: Object.freeze([-1.9098593, -5.5463432e-1, -2.4404599e-1, -9.4980438e-2, -2.1411424e-2, -9.1328612e-2]),
});
const PHI2_TABLE: HermiteTable = Object.freeze({
  x: rad([7.5, 30, 60, 90, 120, 150]),
  y: Object.freeze([9.25e-1, 6.2884169e-1, 3.1755495e-1, 1.2716367e-1, 2.2373903e-2, 1.6505689e-4]),
  dy: Object.freeze([-5.729578e-1, -7.6705367e-1, -4.5665789e-1, -2.8071809e-1, -1.1173257e-1, -8.6573138e-8]),
});
const PHI3_TABLE: HermiteTable = Object.freeze({
  x: rad([0, 0.3, 1, 2, 4, 8, 12, 20, 30]),
  y: Object.freeze([1, 8.3381185e-1, 5.7735424e-1, 4.2144772e-1, 2.317423e-1, 1.0348178e-1, 6.1733473e-2, 1.6107006e-2, 0]),
  dy: Object.freeze([-1.0630097e-1, -4.1180439e1, -1.0366915e1, -7.5784615, -3.696095, -7.8605652e-1, -4.6527012e-1, -2.0459545e-1, 0]),
});

/** The three basis functions of the H,G1,G2 system at one phase angle (Muinonen et al. 2010). */
export interface PhaseFunctionsHG1G2 {
  phi1: number;
  phi2: number;
  phi3: number;
}

/**
 * Basis functions Phi1, Phi2, Phi3 of the H,G1,G2 system (Muinonen et al.
 * 2010, Icarus 209, 542): cubic Hermite pieces through the published node values
 * and derivatives; below 7.5 deg Phi1 = 1 - 6 alpha/pi and Phi2 = 1 - 9
 * alpha/(5 pi) (alpha in rad); Phi3 is 0 beyond 30 deg. Defined for phase 0-150 deg.
 */
export function phaseFunctionsHG1G2(phaseDeg: number): PhaseFunctionsHG1G2 {
  requireInRange('phaseDeg (Sun-object-observer angle, deg)', phaseDeg, 0, 150);
  const alpha = phaseDeg * DEG;
  const linearPart = phaseDeg < 7.5;
  return {
    phi1: linearPart ? 1 - (6 * alpha) / Math.PI : evaluateHermite(PHI1_TABLE, alpha),
    phi2: linearPart ? 1 - (9 * alpha) / (5 * Math.PI) : evaluateHermite(PHI2_TABLE, alpha),
    phi3: phaseDeg >= 30 ? 0 : evaluateHermite(PHI3_TABLE, alpha),
  };
}

/**
 * G1 and G2 from the single parameter G12 (Muinonen et al. 2010, eq. 17):
 * G12 < 0.2: G1 = 0.7527 G12 + 0.06164, G2 = -0.9612 G12 + 0.6270;
 * otherwise G1 = 0.9529 G12 + 0.02162, G2 = -0.6125 G12 + 0.5572.
 */
export function g1g2FromG12(g12: number): { g1: number; g2: number } {
  requireInRange('g12 (H,G12 slope parameter)', g12, -0.1, 1.0);
  return g12 < 0.2
    ? { g1: 0.7527 * g12 + 0.06164, g2: -0.9612 * g12 + 0.627 }
    : { g1: 0.9529 * g12 + 0.02162, g2: -0.6125 * g12 + 0.5572 };
}

/**
 * Apparent V magnitude in the H,G12 system (Muinonen et al. 2010):
 * V = H + 5 log10(r Delta) - 2.5 log10[G1 Phi1 + G2 Phi2 + (1 - G1 - G2) Phi3].
 * Distances in au, phase in deg (0-150).
 */
export function apparentMagnitudeHG12(hMag: number, g12: number, rAu: number, deltaAu: number, phaseDeg: number): number {
  requireFinite('hMag (absolute magnitude)', hMag);
  requirePositive('rAu (heliocentric distance, au)', rAu);
  requirePositive('deltaAu (observer distance, au)', deltaAu);
  const { g1, g2 } = g1g2FromG12(g12);
  const { phi1, phi2, phi3 } = phaseFunctionsHG1G2(phaseDeg);
  const blend = g1 * phi1 + g2 * phi2 + (1 - g1 - g2) * phi3;
  if (!(blend > 0)) {
    throw new PhotometryInputError('phaseDeg (Sun-object-observer angle, deg)', phaseDeg, `H,G12 phase function is not positive there for g12 = ${g12}`);
  }
  return hMag + 5 * Math.log10(rAu * deltaAu) - 2.5 * Math.log10(blend);
}

// ---- size ----

/** Geometric albedo assumed when none is known, the usual NEO survey convention (common practice). */
export const DEFAULT_GEOMETRIC_ALBEDO = 0.14;

/**
 * Effective diameter, m, from absolute magnitude and geometric albedo:
 * D = 1329 km / sqrt(p_V) x 10^(-H/5) (Fowler & Chillemi 1992, IRAS Minor
 * Planet Survey; Pravec & Harris 2007, Icarus 190, 250, eq. 3).
 */
export function diameterM(hMag: number, albedo: number): number {
  requireFinite('hMag (absolute magnitude)', hMag);
  requireInRange('albedo (geometric, V band)', albedo, 1e-3, 2);
  return (1329e3 / Math.sqrt(albedo)) * Math.pow(10, -hMag / 5);
}

/** Diameter range, m, for an albedo range (bright albedo gives the small end). */
export function diameterRangeM(hMag: number, albedoMin: number, albedoMax: number): { minM: number; maxM: number } {
  if (albedoMin > albedoMax) throw new PhotometryInputError('albedoMin', albedoMin, `must not exceed albedoMax (${albedoMax})`);
  return { minM: diameterM(hMag, albedoMax), maxM: diameterM(hMag, albedoMin) };
}
