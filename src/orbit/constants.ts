import { Body, MassProduct } from 'astronomy-engine';
import '../sky/time-scale.js'; // every user of astronomy-engine loads the project's time scale

/**
 * Physical constants for the dynamics. Mass products GM are the DE405 values
 * astronomy-engine carries (au^3/day^2), so our forces match the library's
 * planetary theory; c and the au are the IAU 2012 / SI exact values.
 */

/** Sun, au^3/day^2 (DE405, via astronomy-engine MassProduct). */
export const GM_SUN_AU3_PER_DAY2 = MassProduct(Body.Sun);
/** Earth alone (not the Earth-Moon barycentre), au^3/day^2. */
export const GM_EARTH_AU3_PER_DAY2 = MassProduct(Body.Earth);
/** Moon, au^3/day^2. */
export const GM_MOON_AU3_PER_DAY2 = MassProduct(Body.Moon);

/** Astronomical unit in km (IAU 2012 Resolution B2, exact). */
export const KM_PER_AU = 149_597_870.7;
/** Speed of light in au/day: 299 792.458 km/s x 86 400 s / KM_PER_AU. */
export const LIGHT_AU_PER_DAY = (299_792.458 * 86_400) / KM_PER_AU;

export const SECONDS_PER_DAY = 86_400;
export const DEG_PER_RAD = 180 / Math.PI;
export const RAD_PER_DEG = Math.PI / 180;
export const ARCSEC_PER_RAD = DEG_PER_RAD * 3600;

/**
 * Mean obliquity of the J2000 ecliptic, radians: 84381.406 arcsec (IAU 2006,
 * Capitaine et al. 2003), the value astronomy-engine's ECL<->EQJ rotation uses.
 */
export const OBLIQUITY_J2000_RAD = 0.40909260059599012;
