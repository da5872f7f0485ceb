/**
 * Scalar φ-functions (Hochbruck & Ostermann 2010):
 *   φ_0(z) = e^z,   φ_k(z) = Σ_{j≥0} z^j / (j+k)!,   φ_{k+1}(z) = (φ_k(z) − 1/k!) / z.
 * The closed forms cancel catastrophically as z → 0, so each φ_k is summed from its Taylor series
 * while |z| < seriesRadius(k) and obtained by the upward recurrence from e^z beyond it.
 * The radius grows with k because the recurrence loses about log10(e^{Re z} / (|z|^k φ_k(z))) digits.
 */

/** Below this |z| the series is used for φ_k (see the module comment). */
export function seriesRadius(k: number): number {
  return 2 + 0.5 * k;
}

const MAX_SERIES_TERMS = 400;

/** 1/k! for k = 0..170 (beyond that it underflows to 0, which is harmless here). */
const INV_FACTORIAL: Float64Array = (() => {
  const t = new Float64Array(171);
  t[0] = 1;
  for (let k = 1; k < t.length; k++) t[k] = t[k - 1] / k;
  return t;
})();

export function inverseFactorial(k: number): number {
  return k < INV_FACTORIAL.length ? INV_FACTORIAL[k] : 0;
}

/** φ_k(z) for real z by the series Σ_j z^j/(j+k)! (use only for moderate |z|). */
export function phiSeriesReal(k: number, z: number): number {
  let term = inverseFactorial(k); // z^0 / k!
  let sum = term;
  for (let j = 1; j < MAX_SERIES_TERMS; j++) {
    term *= z / (j + k);
    sum += term;
    if (Math.abs(term) <= 1e-17 * Math.abs(sum) && j > Math.abs(z)) break;
  }
  return sum;
}

/** φ_k(z) for real z, accurate to a few ulps for k ≤ 10 and any z. */
export function phiReal(k: number, z: number): number {
  if (k === 0) return Math.exp(z);
  if (Math.abs(z) < seriesRadius(k)) return phiSeriesReal(k, z);
  let f = Math.exp(z);
  for (let j = 0; j < k; j++) f = (f - inverseFactorial(j)) / z;
  return f;
}

/** out[k] = φ_k(z), k = 0..p, for real z. */
export function phiRealAll(out: Float64Array, p: number, z: number): void {
  out[0] = Math.exp(z);
  if (Math.abs(z) >= seriesRadius(p)) {
    for (let j = 0; j < p; j++) out[j + 1] = (out[j] - inverseFactorial(j)) / z;
    return;
  }
  for (let k = 1; k <= p; k++) out[k] = phiReal(k, z);
}

/**
 * φ_k(z) for complex z = zr + i zi, k = 0..p, into outRe[k], outIm[k]. Allocation-free.
 * Same switch between series and recurrence as the real version.
 */
export function phiComplexAll(outRe: Float64Array, outIm: Float64Array, p: number, zr: number, zi: number): void {
  const ez = Math.exp(zr);
  outRe[0] = ez * Math.cos(zi);
  outIm[0] = ez * Math.sin(zi);
  const az = Math.hypot(zr, zi);
  if (az >= seriesRadius(p)) {
    // upward recurrence φ_{j+1} = (φ_j − 1/j!) / z, 1/z = conj(z)/|z|²
    const d = zr * zr + zi * zi, ir = zr / d, ii = -zi / d;
    for (let j = 0; j < p; j++) {
      const ar = outRe[j] - inverseFactorial(j), ai = outIm[j];
      outRe[j + 1] = ar * ir - ai * ii;
      outIm[j + 1] = ar * ii + ai * ir;
    }
    return;
  }
  for (let k = 1; k <= p; k++) {
    if (az >= seriesRadius(k)) {
      const d = zr * zr + zi * zi, ir = zr / d, ii = -zi / d;
      const ar = outRe[k - 1] - inverseFactorial(k - 1), ai = outIm[k - 1];
      outRe[k] = ar * ir - ai * ii;
      outIm[k] = ar * ii + ai * ir;
      continue;
    }
    // series Σ_j z^j/(j+k)!
    let tr = inverseFactorial(k), ti = 0;
    let sr = tr, si = 0;
    for (let j = 1; j < MAX_SERIES_TERMS; j++) {
      const f = 1 / (j + k);
      const nr = (tr * zr - ti * zi) * f, ni = (tr * zi + ti * zr) * f;
      tr = nr; ti = ni;
      sr += tr; si += ti;
      if (Math.abs(tr) + Math.abs(ti) <= 1e-17 * (Math.abs(sr) + Math.abs(si)) && j > az) break;
    }
    outRe[k] = sr;
    outIm[k] = si;
  }
}

/** The naive closed form φ_k(z) = (e^z − Σ_{j<k} z^j/j!) / z^k; kept for tests that show it failing near 0. */
export function phiClosedFormReal(k: number, z: number): number {
  let s = Math.exp(z), zj = 1;
  for (let j = 0; j < k; j++) {
    s -= zj * inverseFactorial(j);
    zj *= z;
  }
  return s / zj;
}
