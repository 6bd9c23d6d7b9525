/**
 * Token-bucket rate limiting per caller key: `perMinute` requests may burst,
 * refilled continuously at perMinute/60 per second.
 */
export function createRateLimiter(perMinute: number, now: () => number = Date.now) {
  const buckets = new Map<string, { tokens: number; at: number }>();
  const refillPerMs = perMinute / 60_000;
  return {
    /** Takes one token for `key`; returns the seconds to wait when none is left, else 0. */
    take(key: string): number {
      const t = now();
      const b = buckets.get(key) ?? { tokens: perMinute, at: t };
      b.tokens = Math.min(perMinute, b.tokens + (t - b.at) * refillPerMs);
      b.at = t;
      buckets.set(key, b);
      if (buckets.size > 10_000) {
        for (const [k, v] of buckets) if (v.tokens >= perMinute) buckets.delete(k);
      }
      if (b.tokens >= 1) {
        b.tokens -= 1;
        return 0;
      }
      return Math.ceil((1 - b.tokens) / refillPerMs / 1000);
    },
  };
}
