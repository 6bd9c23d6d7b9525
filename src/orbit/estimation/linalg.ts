/**
 * Small dense linear algebra for least squares (matrices up to about 6 x 6,
 * row-major number[][]): inversion by Gauss-Jordan elimination with partial
 * pivoting and the Cholesky factor of a symmetric positive-definite matrix
 * (Golub & Van Loan, Matrix Computations, 4th ed., algorithms 3.1 and 4.2.1).
 */

/** Inverse of a square matrix; null when it is singular to working precision. */
export function invert(matrix: readonly (readonly number[])[]): number[][] | null {
  const n = matrix.length;
  const a = matrix.map((row, i) => [...row, ...Array.from({ length: n }, (_, j) => (i === j ? 1 : 0))]);
  let scale = 0;
  for (const row of matrix) for (const x of row) scale = Math.max(scale, Math.abs(x));
  if (!(scale > 0)) return null;
  for (let col = 0; col < n; col++) {
    let pivot = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(a[r]![col]!) > Math.abs(a[pivot]![col]!)) pivot = r;
    if (Math.abs(a[pivot]![col]!) <= 1e-14 * scale) return null;
    [a[col], a[pivot]] = [a[pivot]!, a[col]!];
    const p = a[col]!;
    const inv = 1 / p[col]!;
    for (let j = 0; j < 2 * n; j++) p[j]! *= inv;
    for (let r = 0; r < n; r++) {
      if (r === col) continue;
      const row = a[r]!;
      const f = row[col]!;
      if (f === 0) continue;
      for (let j = 0; j < 2 * n; j++) row[j] = row[j]! - f * p[j]!;
    }
  }
  return a.map((row) => row.slice(n));
}

/** Lower-triangular L with L L^T = matrix; negative pivots (round-off) are clamped to 0. */
export function cholesky(matrix: readonly (readonly number[])[]): number[][] {
  const n = matrix.length;
  const l = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = matrix[i]![j]!;
      for (let k = 0; k < j; k++) s -= l[i]![k]! * l[j]![k]!;
      if (i === j) l[i]![i] = Math.sqrt(Math.max(s, 0));
      else l[i]![j] = l[j]![j]! > 0 ? s / l[j]![j]! : 0;
    }
  }
  return l;
}

/** Eigen-decomposition of a symmetric 2 x 2 matrix [[a, b], [b, c]]: values (larger first) and the larger one's unit vector. */
export function symmetricEigen2(a: number, b: number, c: number): { large: number; small: number; vx: number; vy: number } {
  const mean = (a + c) / 2;
  const half = Math.hypot((a - c) / 2, b);
  const large = mean + half;
  const small = mean - half;
  const angle = 0.5 * Math.atan2(2 * b, a - c);
  return { large, small, vx: Math.cos(angle), vy: Math.sin(angle) };
}
