const rad = Math.PI / 180;

/**
 * Independent sunrise equation (NOAA solar calculator method, after Meeus ch. 25 low-accuracy Sun):
 * the UTC instant when the Sun's centre is at altitude h0Deg, rising (+1) or setting (-1), on the
 * UTC day containing `dayUtc`, iterated twice on the event time.
 */
export function noaaSunEvent(dayUtc: Date, latDeg: number, lonDeg: number, h0Deg: number, direction: 1 | -1): Date {
  const day0 = Date.UTC(dayUtc.getUTCFullYear(), dayUtc.getUTCMonth(), dayUtc.getUTCDate());
  let minutes = 720;
  for (let iter = 0; iter < 3; iter++) {
    const jd = (day0 + minutes * 60_000) / 86_400_000 + 2440587.5;
    const t = (jd - 2451545) / 36525;
    const l0 = (280.46646 + t * (36000.76983 + t * 0.0003032)) % 360;
    const m = 357.52911 + t * (35999.05029 - 0.0001537 * t);
    const e = 0.016708634 - t * (0.000042037 + 0.0000001267 * t);
    const c =
      Math.sin(m * rad) * (1.914602 - t * (0.004817 + 0.000014 * t)) +
      Math.sin(2 * m * rad) * (0.019993 - 0.000101 * t) +
      Math.sin(3 * m * rad) * 0.000289;
    const omega = 125.04 - 1934.136 * t;
    const lambda = l0 + c - 0.00569 - 0.00478 * Math.sin(omega * rad);
    const eps0 = 23 + (26 + (21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))) / 60) / 60;
    const eps = eps0 + 0.00256 * Math.cos(omega * rad);
    const decl = Math.asin(Math.sin(eps * rad) * Math.sin(lambda * rad));
    const y = Math.tan((eps / 2) * rad) ** 2;
    const eqTimeMin =
      (4 / rad) *
      (y * Math.sin(2 * l0 * rad) -
        2 * e * Math.sin(m * rad) +
        4 * e * y * Math.sin(m * rad) * Math.cos(2 * l0 * rad) -
        0.5 * y * y * Math.sin(4 * l0 * rad) -
        1.25 * e * e * Math.sin(2 * m * rad));
    const cosH = (Math.sin(h0Deg * rad) - Math.sin(latDeg * rad) * Math.sin(decl)) / (Math.cos(latDeg * rad) * Math.cos(decl));
    const hDeg = Math.acos(cosH) / rad;
    const noon = 720 - 4 * lonDeg - eqTimeMin;
    minutes = noon + (direction === 1 ? -4 : 4) * hDeg;
  }
  return new Date(day0 + minutes * 60_000);
}

