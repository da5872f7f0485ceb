/**
 * Small vector kernels shared by the φ backends. Kernels take their output first (except axpy, which
 * keeps the BLAS order). Inner products are weighted when `w` is given: <a,b> = Σ_j w_j a_j b_j.
 * Callers count the global reductions they perform; these helpers do not.
 */

export function dot(a: Float64Array, b: Float64Array, w?: Float64Array): number {
  let s = 0;
  const n = a.length;
  if (w) for (let i = 0; i < n; i++) s += w[i] * a[i] * b[i];
  else for (let i = 0; i < n; i++) s += a[i] * b[i];
  return s;
}

export function norm(a: Float64Array, w?: Float64Array): number {
  return Math.sqrt(dot(a, a, w));
}

/** y += alpha x */
export function axpy(alpha: number, x: Float64Array, y: Float64Array): void {
  for (let i = 0, n = y.length; i < n; i++) y[i] += alpha * x[i];
}

/** out = alpha x */
export function scaleInto(out: Float64Array, alpha: number, x: Float64Array): void {
  for (let i = 0, n = out.length; i < n; i++) out[i] = alpha * x[i];
}

/** True when every entry is exactly zero (a local scan with early exit, not a reduction of values). */
export function isZero(a: Float64Array): boolean {
  for (let i = 0, n = a.length; i < n; i++) if (a[i] !== 0) return false;
  return true;
}

export function maxAbs(a: Float64Array): number {
  let m = 0;
  for (let i = 0, n = a.length; i < n; i++) {
    const x = Math.abs(a[i]);
    if (x > m) m = x;
  }
  return m;
}

/** Index of the highest non-zero vector in v (−1 if all are zero). */
export function highestNonZero(v: readonly Float64Array[]): number {
  for (let k = v.length - 1; k >= 0; k--) if (!isZero(v[k])) return k;
  return -1;
}
