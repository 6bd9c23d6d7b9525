/**
 * Quantiles and resampling shared by every floor (a pure floor of its own:
 * it imports nothing from the project).
 *
 * One convention throughout, for weighted and unweighted values alike: the
 * p-quantile is the smallest value whose cumulative weight reaches p of the
 * total, the inverse of the empirical distribution function (Hyndman & Fan
 * 1996, The American Statistician 50, 361, definition 1; NumPy's
 * 'inverted_cdf', the one method NumPy accepts with weights). Without
 * weights every value weighs the same, so it is the ceil(p n)-th smallest
 * (the median of an even count is the lower middle value). An interpolating
 * definition would let a value of negligible weight pull a tail quantile of
 * importance weights towards itself; this one always answers a value of the
 * sample. Comparisons allow a relative rounding of 1e-9 in p (so 0.3 of ten
 * values is the third, although 0.3 x 10 rounds above 3 in binary).
 */

/** Rounding allowance in p (module comment). */
const P_ROUNDING = 1e-9;

/** 0-based index of the p-quantile among `count` equally weighted sorted values. */
function rankIndex(p: number, count: number): number {
  return Math.min(count - 1, Math.max(0, Math.ceil((p - P_ROUNDING) * count) - 1));
}

/**
 * The p-quantile (p in 0..1) of values already in ascending order, of which
 * the first `count` take part (so a Float64Array with NaN sorted last can pass
 * its finite count). NaN for none. Module comment for the convention.
 */
export function quantileSorted(sorted: ArrayLike<number>, p: number, count: number = sorted.length): number {
  if (count <= 0) return Number.NaN;
  return sorted[rankIndex(p, count)]!;
}

/** The p-quantile (p in 0..1) of values in any order (copied and sorted); NaN for none. */
export function quantile(values: ArrayLike<number>, p: number): number {
  return quantileSorted(Float64Array.from(values).sort(), p);
}

/** Several quantiles of one set of values from one sort; NaN for each when there are none. */
export function quantiles<P extends readonly number[]>(values: ArrayLike<number>, ps: P): { [K in keyof P]: number } {
  const sorted = Float64Array.from(values).sort();
  return ps.map((p) => quantileSorted(sorted, p)) as { [K in keyof P]: number };
}

/** The median: the 0.5 quantile (the lower middle value of an even count); NaN for none. */
export function median(values: ArrayLike<number>): number {
  return quantile(values, 0.5);
}

/**
 * The p-quantile of values with non-negative weights (their sum need not be
 * 1): the smallest value whose cumulative weight reaches p of the total.
 * Equal weights give `quantile`. NaN when no value has weight.
 */
export function weightedQuantile(values: ArrayLike<number>, weights: ArrayLike<number>, p: number): number {
  if (values.length !== weights.length) throw new RangeError(`weightedQuantile: ${values.length} values but ${weights.length} weights`);
  const order: number[] = [];
  let total = 0;
  for (let i = 0; i < values.length; i++) {
    const w = weights[i]!;
    if (!(w >= 0) || !Number.isFinite(w)) throw new RangeError(`weightedQuantile: weight ${i} is ${w}; weights must be finite and >= 0`);
    if (w > 0) {
      order.push(i);
      total += w;
    }
  }
  if (order.length === 0) return Number.NaN;
  order.sort((a, b) => values[a]! - values[b]!);
  const target = (p - P_ROUNDING) * total;
  let cumulative = 0;
  for (const i of order) {
    cumulative += weights[i]!;
    if (cumulative >= target) return values[i]!;
  }
  return values[order[order.length - 1]!]!;
}

/**
 * Quantiles at or above `fromP` of `values` (the same as `quantile`),
 * ordering only the values that can take part: the largest
 * n - (index of the fromP-quantile) of them, kept in one selection pass. For
 * a high quantile of a large sample, where a full sort would cost most of the
 * time.
 */
export function upperTail(values: ArrayLike<number>, fromP: number): { quantile(p: number): number } {
  const n = values.length;
  if (n === 0) return { quantile: () => Number.NaN };
  const first = rankIndex(fromP, n);
  const keep = n - first;
  // Smallest-first ordered buffer of the `keep` largest values seen so far.
  const top = new Float64Array(keep).fill(-Infinity);
  for (let m = 0; m < n; m++) {
    const v = values[m]!;
    if (!(v > top[0]!)) continue;
    let i = 1;
    while (i < keep && top[i]! < v) {
      top[i - 1] = top[i]!;
      i++;
    }
    top[i - 1] = v;
  }
  return {
    quantile(p: number): number {
      if (p < fromP) throw new RangeError(`upperTail: asked for the ${p} quantile of a tail kept from ${fromP}`);
      return top[rankIndex(p, n) - first]!;
    },
  };
}

/**
 * `count` indices drawn by systematic resampling of non-negative weights
 * (Kitagawa 1996, J. Comput. Graph. Stat. 5, 1): one offset u in [0, 1),
 * pointers at (u + m) / count of the total weight, m = 0..count-1, each
 * taking the index whose cumulative weight first exceeds it. Index j appears
 * floor or ceil of count w_j / sum w times, in ascending order. `uniform` is
 * the offset u, drawn by the caller (so the caller's random stream decides).
 */
export function systematicResample(weights: ArrayLike<number>, count: number, uniform: number): number[] {
  let total = 0;
  for (let j = 0; j < weights.length; j++) {
    const w = weights[j]!;
    if (!(w >= 0) || !Number.isFinite(w)) throw new RangeError(`systematicResample: weight ${j} is ${w}; weights must be finite and >= 0`);
    total += w;
  }
  if (!(total > 0)) throw new RangeError('systematicResample: the weights sum to zero');
  if (!(uniform >= 0 && uniform < 1)) throw new RangeError(`systematicResample: offset ${uniform} is outside [0, 1)`);
  const out: number[] = [];
  const step = total / count;
  let pointer = uniform * step;
  let cumulative = 0;
  for (let j = 0; j < weights.length && out.length < count; j++) {
    cumulative += weights[j]!;
    while (pointer < cumulative && out.length < count) {
      out.push(j);
      pointer += step;
    }
  }
  // Rounding can leave the last pointers just past the sum: they belong to the last index with weight.
  let last = weights.length - 1;
  while (last > 0 && !(weights[last]! > 0)) last--;
  while (out.length < count) out.push(last);
  return out;
}
