/** The p-quantile (0..1) of values by linear interpolation between order statistics (Hyndman & Fan 1996, type 7); NaN for none. */
export function quantile(values: readonly number[], p: number): number {
  const s = [...values].sort((a, b) => a - b);
  if (s.length === 0) return Number.NaN;
  const x = p * (s.length - 1);
  const i = Math.floor(x);
  return s[i]! + (i + 1 < s.length ? (x - i) * (s[i + 1]! - s[i]!) : 0);
}
