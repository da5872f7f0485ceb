/**
 * Small dense matrices (square, row-major Float64Array of length n·n):
 *  - expm by scaling and squaring with diagonal Padé approximants (Higham 2005, SIAM J. Matrix Anal.
 *    Appl. 26, 1179–1193, Algorithm 2.3);
 *  - φ-combinations Σ_k τ^k φ_k(τA) v_k from one exponential of the augmented matrix
 *    (Al-Mohy & Higham 2011, SIAM J. Sci. Comput. 33, 488–511, Theorem 2.1);
 *  - `denseOperator` and the `densePhi` backend, the slow but obviously right reference for tests.
 * Work arrays live in an `ExpmWorkspace` created once for the largest size needed.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, OperatorCounters, PhiAction, PhiOptions, PhiStats } from "./types.js";
import { highestNonZero } from "./vector.js";

/**
 * θ_m of Higham (2005), Table 2.3 (double precision): the largest ‖A‖_1 for which the degree-m
 * diagonal Padé approximant has backward error ≤ 2^-53. Quoted from memory; the tests check the
 * resulting expm against mathjs's independent implementation.
 */
export const PADE_THETA: ReadonlyArray<{ readonly m: number; readonly theta: number }> = [
  { m: 3, theta: 1.495585217958292e-2 },
  { m: 5, theta: 2.539398330063230e-1 },
  { m: 7, theta: 9.504178996162932e-1 },
  { m: 9, theta: 2.097847961257068e0 },
  { m: 13, theta: 5.371920351148152e0 },
];

/**
 * Coefficients of the numerator of the [m/m] Padé approximant to e^x (normalised to b_0 = 1):
 * b_j = (2m−j)! m! / ((2m)! j! (m−j)!), so p(x) = Σ b_j x^j and q(x) = p(−x) (Higham 2005, eq. 2.1).
 */
export function padeCoefficients(m: number): Float64Array {
  const b = new Float64Array(m + 1);
  b[0] = 1;
  for (let j = 1; j <= m; j++) b[j] = (b[j - 1] * (m - j + 1)) / (j * (2 * m - j + 1));
  return b;
}

const PADE_B = new Map<number, Float64Array>(PADE_THETA.map(({ m }) => [m, padeCoefficients(m)]));

export interface ExpmWorkspace {
  readonly nMax: number;
  readonly a: Float64Array;
  readonly a2: Float64Array;
  readonly a4: Float64Array;
  readonly a6: Float64Array;
  readonly a8: Float64Array;
  readonly u: Float64Array;
  readonly v: Float64Array;
  readonly t: Float64Array;
  readonly piv: Int32Array;
}

export function createExpmWorkspace(nMax: number): ExpmWorkspace {
  const sq = nMax * nMax;
  return {
    nMax,
    a: new Float64Array(sq), a2: new Float64Array(sq), a4: new Float64Array(sq), a6: new Float64Array(sq),
    a8: new Float64Array(sq), u: new Float64Array(sq), v: new Float64Array(sq), t: new Float64Array(sq),
    piv: new Int32Array(nMax),
  };
}

/** out = a b (n×n, row-major). out must not alias a or b. */
export function matmul(out: Float64Array, a: Float64Array, b: Float64Array, n: number): void {
  out.fill(0, 0, n * n);
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    for (let k = 0; k < n; k++) {
      const aik = a[ri + k];
      if (aik === 0) continue;
      const rk = k * n;
      for (let j = 0; j < n; j++) out[ri + j] += aik * b[rk + j];
    }
  }
}

/** out = A x for a dense n×n A. */
export function matvec(out: Float64Array, a: Float64Array, x: Float64Array, n: number): void {
  for (let i = 0; i < n; i++) {
    let s = 0;
    const ri = i * n;
    for (let j = 0; j < n; j++) s += a[ri + j] * x[j];
    out[i] = s;
  }
}

/** Maximum absolute column sum. */
export function norm1(a: Float64Array, n: number): number {
  let best = 0;
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += Math.abs(a[i * n + j]);
    if (s > best) best = s;
  }
  return best;
}

/**
 * Solve A X = B in place (A n×n is overwritten by its LU factors, B n×nrhs row-major by X),
 * Gaussian elimination with partial pivoting.
 */
export function luSolve(a: Float64Array, b: Float64Array, n: number, nrhs: number, piv: Int32Array): void {
  for (let k = 0; k < n; k++) {
    let p = k, best = Math.abs(a[k * n + k]);
    for (let i = k + 1; i < n; i++) {
      const x = Math.abs(a[i * n + k]);
      if (x > best) { best = x; p = i; }
    }
    piv[k] = p;
    if (p !== k) {
      for (let j = 0; j < n; j++) { const t = a[k * n + j]; a[k * n + j] = a[p * n + j]; a[p * n + j] = t; }
      for (let j = 0; j < nrhs; j++) { const t = b[k * nrhs + j]; b[k * nrhs + j] = b[p * nrhs + j]; b[p * nrhs + j] = t; }
    }
    const d = a[k * n + k];
    if (d === 0) throw new SolverError("breakdown", "luSolve: singular matrix");
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k] / d;
      if (f === 0) continue;
      a[i * n + k] = f;
      for (let j = k + 1; j < n; j++) a[i * n + j] -= f * a[k * n + j];
      for (let j = 0; j < nrhs; j++) b[i * nrhs + j] -= f * b[k * nrhs + j];
    }
  }
  for (let k = n - 1; k >= 0; k--) {
    const d = a[k * n + k];
    for (let j = 0; j < nrhs; j++) {
      let s = b[k * nrhs + j];
      for (let i = k + 1; i < n; i++) s -= a[k * n + i] * b[i * nrhs + j];
      b[k * nrhs + j] = s / d;
    }
  }
}

/**
 * out = e^A for n×n A (Higham 2005, Algorithm 2.3): the lowest Padé degree m ∈ {3,5,7,9} whose θ_m
 * bounds ‖A‖_1, else degree 13 on A/2^s with s = ⌈log2(‖A‖_1/θ_13)⌉ followed by s squarings.
 * A is not modified. out may alias A.
 */
export function expm(out: Float64Array, aIn: Float64Array, n: number, ws: ExpmWorkspace = createExpmWorkspace(n)): void {
  if (ws.nMax < n) throw new SolverError("bad-input", `expm workspace holds ${ws.nMax}, need ${n}`, "expm.n");
  const nn = n * n;
  const { a, a2, a4, a6, a8, u, v, t, piv } = ws;
  for (let i = 0; i < nn; i++) a[i] = aIn[i];
  const nrm = norm1(a, n);
  let m = 13, s = 0;
  for (const row of PADE_THETA) {
    if (row.m < 13 && nrm <= row.theta) { m = row.m; break; }
  }
  if (m === 13 && nrm > PADE_THETA[4].theta) {
    s = Math.max(0, Math.ceil(Math.log2(nrm / PADE_THETA[4].theta)));
    const f = Math.pow(2, -s);
    for (let i = 0; i < nn; i++) a[i] *= f;
  }
  const b = PADE_B.get(m)!;
  matmul(a2, a, a, n);
  if (m >= 5 || m === 13) matmul(a4, a2, a2, n);
  if (m >= 7 || m === 13) matmul(a6, a4, a2, n);
  if (m === 9) matmul(a8, a6, a2, n);
  if (m === 13) {
    // U = A [A6 (b13 A6 + b11 A4 + b9 A2) + b7 A6 + b5 A4 + b3 A2 + b1 I]
    // V =    A6 (b12 A6 + b10 A4 + b8 A2) + b6 A6 + b4 A4 + b2 A2 + b0 I
    for (let i = 0; i < nn; i++) t[i] = b[13] * a6[i] + b[11] * a4[i] + b[9] * a2[i];
    matmul(a8, a6, t, n);
    for (let i = 0; i < nn; i++) a8[i] += b[7] * a6[i] + b[5] * a4[i] + b[3] * a2[i];
    for (let i = 0; i < n; i++) a8[i * n + i] += b[1];
    matmul(u, a, a8, n);
    for (let i = 0; i < nn; i++) t[i] = b[12] * a6[i] + b[10] * a4[i] + b[8] * a2[i];
    matmul(v, a6, t, n);
    for (let i = 0; i < nn; i++) v[i] += b[6] * a6[i] + b[4] * a4[i] + b[2] * a2[i];
    for (let i = 0; i < n; i++) v[i * n + i] += b[0];
  } else {
    // U = A Σ_{j odd} b_j A^{j−1},  V = Σ_{j even} b_j A^j
    t.fill(0, 0, nn);
    v.fill(0, 0, nn);
    for (let i = 0; i < n; i++) { t[i * n + i] = b[1]; v[i * n + i] = b[0]; }
    for (let j = 2; j <= m; j += 2) {
      const p = j === 2 ? a2 : j === 4 ? a4 : j === 6 ? a6 : a8;
      for (let i = 0; i < nn; i++) { t[i] += b[j + 1] * p[i]; v[i] += b[j] * p[i]; }
    }
    for (let i = 0; i < nn; i++) a2[i] = t[i];
    matmul(u, a, a2, n);
  }
  // solve (V − U) X = (V + U)
  for (let i = 0; i < nn; i++) {
    const vi = v[i], ui = u[i];
    t[i] = vi - ui;
    out[i] = vi + ui;
  }
  luSolve(t, out, n, n, piv);
  for (let k = 0; k < s; k++) {
    for (let i = 0; i < nn; i++) a[i] = out[i];
    matmul(out, a, a, n);
  }
}

/** Dense matrix wrapped as a LinearOperator (counts its applications). */
export interface DenseOperator extends LinearOperator {
  readonly matrix: Float64Array;
}

export function denseOperator(
  matrix: Float64Array,
  extras: { weights?: Float64Array; spectralBound?: number; skew?: boolean } = {},
): DenseOperator {
  const n = Math.round(Math.sqrt(matrix.length));
  if (n * n !== matrix.length) throw new SolverError("bad-input", `matrix length ${matrix.length} is not a square`, "matrix");
  const counters: OperatorCounters = { matvecs: 0, innerProducts: 0 };
  return {
    n, matrix, counters, ...extras,
    apply(out, x) {
      matvec(out, matrix, x, n);
      counters.matvecs++;
    },
  };
}

/**
 * Work arrays for Σ_k τ^k φ_k(τA) v_k by the augmented matrix of Al-Mohy & Higham (2011, Thm 2.1):
 *   exp(Ã) [v_0; e_p/η] with Ã = [[τA, ηW], [0, J]], W = [τ^p v_p, …, τ v_1], J = upper shift (p×p).
 * η = 2^−⌈log2 ‖W‖_1⌉ balances the blocks (their §3); it cancels exactly in the result.
 */
export interface PhiCombinationWorkspace {
  readonly n: number;
  readonly maxPhi: number;
  readonly aug: Float64Array;
  readonly expAug: Float64Array;
  readonly expm: ExpmWorkspace;
}

export function createPhiCombinationWorkspace(n: number, maxPhi: number): PhiCombinationWorkspace {
  const N = n + maxPhi;
  return { n, maxPhi, aug: new Float64Array(N * N), expAug: new Float64Array(N * N), expm: createExpmWorkspace(N) };
}

/** out = Σ_{k=0}^{p} τ^k φ_k(τA) v[k] for a dense n×n A (p = v.length − 1 ≤ ws.maxPhi). */
export function phiCombinationDense(
  out: Float64Array, a: Float64Array, n: number, tau: number, v: readonly Float64Array[], ws: PhiCombinationWorkspace,
): void {
  const p = Math.max(0, highestNonZero(v));
  if (p > ws.maxPhi) throw new SolverError("bad-input", `phi index ${p} exceeds maxPhi ${ws.maxPhi}`, "phi.apply");
  const N = n + p;
  const { aug, expAug } = ws;
  aug.fill(0, 0, N * N);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) aug[i * N + j] = tau * a[i * n + j];
  // W column c (c = 0..p−1) is τ^{p−c} v_{p−c}
  let wNorm = 0;
  for (let c = 0; c < p; c++) {
    const k = p - c, f = Math.pow(tau, k);
    let s = 0;
    for (let i = 0; i < n; i++) s += Math.abs(f * v[k][i]);
    wNorm = Math.max(wNorm, s);
  }
  const eta = wNorm > 0 ? Math.pow(2, -Math.ceil(Math.log2(wNorm))) : 1;
  for (let c = 0; c < p; c++) {
    const k = p - c, f = eta * Math.pow(tau, k);
    for (let i = 0; i < n; i++) aug[i * N + n + c] = f * v[k][i];
  }
  for (let c = 0; c + 1 < p; c++) aug[(n + c) * N + n + c + 1] = 1;
  expm(expAug, aug, N, ws.expm);
  const v0 = v.length > 0 ? v[0] : undefined;
  for (let i = 0; i < n; i++) {
    let s = 0;
    if (v0) for (let j = 0; j < n; j++) s += expAug[i * N + j] * v0[j];
    if (p > 0) s += expAug[i * N + n + p - 1] / eta;
    out[i] = s;
  }
}

/**
 * The dense backend: extracts the matrix once (n operator applications at creation unless the operator
 * is a DenseOperator) and evaluates every call by one augmented-matrix exponential, O((n+p)³) work.
 */
export function densePhi(op: LinearOperator, opts: PhiOptions): PhiAction {
  const n = op.n;
  let matrix: Float64Array;
  if ((op as Partial<DenseOperator>).matrix instanceof Float64Array) matrix = (op as DenseOperator).matrix;
  else {
    matrix = new Float64Array(n * n);
    const e = new Float64Array(n), col = new Float64Array(n);
    for (let j = 0; j < n; j++) {
      e.fill(0); e[j] = 1;
      op.apply(col, e);
      for (let i = 0; i < n; i++) matrix[i * n + j] = col[i];
    }
  }
  const ws = createPhiCombinationWorkspace(n, opts.maxPhi);
  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 1, errorEstimate: NaN, happyBreakdown: false };
  return {
    name: "dense", stats,
    apply(out, tau, v) {
      phiCombinationDense(out, matrix, n, tau, v, ws);
    },
  };
}
