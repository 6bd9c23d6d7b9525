/**
 * The tracklet as the floors exchange it: intake and the store produce it,
 * orbit estimation and planning take it, the jobs carry it into worker threads.
 */

/** A place on the Earth: geodetic latitude and longitude in degrees (east positive), height in metres. */
export interface GeodeticLocation {
  latDeg: number;
  lonDeg: number;
  heightM: number;
}

/** One astrometric position of a tracklet (ISO-8601 UTC time, degrees, arcsec, magnitudes). */
export interface TrackletObservation {
  t: string;
  raDeg: number;
  decDeg: number;
  /** 1-sigma uncertainty of the position, arcsec. */
  sigmaArcsec: number;
  mag: number | null;
  band: string | null;
  observer: GeodeticLocation;
}
