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
 * Obliquity of the J2000 ecliptic to which orbital elements refer, radians:
 * 84381.448 arcsec = 23 deg 26' 21.448" (IAU 1976, Lieske et al. 1977), the
 * frame of published osculating elements ("ecliptic and mean equinox of
 * J2000") and of the notice's orbit block. astronomy-engine's ECL frame uses
 * 84381.406" (IAU 2006); the 0.042" between them tilts an orbit's plane by as
 * much, 0.4-1.4" in a close approacher's place.
 */
export const OBLIQUITY_J2000_RAD = (84381.448 / 3600) * (Math.PI / 180);
