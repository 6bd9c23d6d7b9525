/**
 * Brightness of a reference truth, written for the generator alone.
 * V = H + 5 log10(r Delta) - 2.5 log10[(1 - G) phi1 + G phi2], with the
 * two-parameter phase functions phi_i = exp(-A_i tan(alpha/2)^B_i),
 * A1 = 3.33, B1 = 0.63, A2 = 1.87, B2 = 1.22 (Bowell et al. 1989, in
 * Asteroids II, p. 524, eq. A5 approximation). Magnitudes in mag, r and
 * Delta in au, alpha in degrees.
 */
export function meanVMagnitude(hMag: number, slopeG: number, rAu: number, deltaAu: number, phaseDeg: number): number {
  const t = Math.tan(((phaseDeg * Math.PI) / 180) / 2);
  const phi1 = Math.exp(-3.33 * t ** 0.63);
  const phi2 = Math.exp(-1.87 * t ** 1.22);
  return hMag + 5 * Math.log10(rAu * deltaAu) - 2.5 * Math.log10((1 - slopeG) * phi1 + slopeG * phi2);
}

/** One object's colours: B - V and V - R (Johnson-Cousins), mag. */
export interface ReferenceColours {
  readonly bMinusV: number;
  readonly vMinusR: number;
}

/**
 * Magnitude in a reported band from V and the object's colours. R: Cousins,
 * m = V - (V - R). g and r: SDSS, from the transformations of Jester et al.
 * 2005 (AJ 130, 873, table 1, "all stars, Rc - Ic < 1.15"):
 * g - r = (B - V - 0.22) / 0.98 and V = g - 0.59 (g - r) - 0.01 (coefficients
 * from memory of that table). V itself unchanged.
 */
export function magnitudeInBand(vMag: number, band: 'V' | 'R' | 'g' | 'r', colours: ReferenceColours): number {
  if (band === 'V') return vMag;
  if (band === 'R') return vMag - colours.vMinusR;
  const gMinusR = (colours.bMinusV - 0.22) / 0.98;
  const g = vMag + 0.59 * gMinusR + 0.01;
  return band === 'g' ? g : g - gMinusR;
}
