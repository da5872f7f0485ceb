/**
 * Eigen-decomposition of a real symmetric tridiagonal matrix T = Q Λ Qᵀ by the implicit symmetric QR
 * iteration with Wilkinson shifts (Golub & Van Loan, Matrix Computations, §8.3).
 * Only chosen rows of Q are accumulated: two rows (first and last) cost O(m²) in total, all rows O(m³).
 */

const EPS = 2.220446049250313e-16;

function negligible(d: Float64Array, e: Float64Array, i: number, absTol: number): boolean {
  const x = Math.abs(e[i]);
  return x <= EPS * (Math.abs(d[i]) + Math.abs(d[i + 1])) || x <= absTol;
}

/**
 * d[0..m−1]: diagonal (overwritten by the eigenvalues, unsorted); e[0..m−2]: off-diagonal (destroyed).
 * z: r × m row-major; on entry the tracked rows of the identity (or of any matrix Z), on exit Z·Q.
 * Returns false if the iteration did not converge (not observed in practice).
 */
export function symmetricTridiagonalEigen(d: Float64Array, e: Float64Array, m: number, z: Float64Array, r: number): boolean {
  if (m <= 1) return true;
  let anorm = 0;
  for (let i = 0; i < m; i++) anorm = Math.max(anorm, Math.abs(d[i]) + (i > 0 ? Math.abs(e[i - 1]) : 0) + (i < m - 1 ? Math.abs(e[i]) : 0));
  const absTol = EPS * anorm;
  let h = m - 1, iter = 0;
  const maxIter = 60 * m;
  while (h > 0) {
    if (negligible(d, e, h - 1, absTol)) { e[h - 1] = 0; h--; continue; }
    let l = h - 1;
    while (l > 0 && !negligible(d, e, l - 1, absTol)) l--;
    if (++iter > maxIter) return false;
    // Wilkinson shift from the trailing 2×2 block [[a, b], [b, c]]
    const a = d[h - 1], b = e[h - 1], c = d[h];
    const delta = 0.5 * (a - c);
    const mu = c - (b * b) / (delta + (delta >= 0 ? 1 : -1) * Math.hypot(delta, b));
    let x = d[l] - mu, y = e[l];
    for (let k = l; k < h; k++) {
      // rotation R = [[cs, sn], [−sn, cs]] on rows/columns k, k+1 zeroing y against x
      const rr = Math.hypot(x, y);
      const cs = rr === 0 ? 1 : x / rr, sn = rr === 0 ? 0 : y / rr;
      if (k > l) e[k - 1] = rr;
      const dk = d[k], dk1 = d[k + 1], ek = e[k];
      d[k] = cs * cs * dk + 2 * cs * sn * ek + sn * sn * dk1;
      d[k + 1] = sn * sn * dk - 2 * cs * sn * ek + cs * cs * dk1;
      e[k] = cs * sn * (dk1 - dk) + (cs * cs - sn * sn) * ek;
      if (k < h - 1) {
        y = sn * e[k + 1]; // bulge at (k+2, k)
        e[k + 1] *= cs;
        x = e[k];
      }
      // Q ← Q Rᵀ on the tracked rows
      for (let i = 0; i < r; i++) {
        const o = i * m, zk = z[o + k], zk1 = z[o + k + 1];
        z[o + k] = cs * zk + sn * zk1;
        z[o + k + 1] = -sn * zk + cs * zk1;
      }
    }
  }
  return true;
}
