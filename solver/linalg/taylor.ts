/**
 * Truncated Taylor series with scaling (Al-Mohy & Higham 2011, SIAM J. Sci. Comput. 33, 488–511,
 * Algorithm 3.2 with the implicit augmentation of their §3; Al-Mohy & Higham 2011):
 *   out = e^{B̃} [v_0; e_p/η] (first n entries),  B̃ = [[τA, ηW], [0, J]],  W = [τ^p v_p, …, τ v_1],
 * applied as s steps of T_m(B̃/s), each truncated early once two successive terms are below the
 * tolerance. B̃ is never formed: B̃ (x; y) = (τ A x + η Σ_c y_c W_c, J y) costs one matvec plus p axpys.
 * (m, s) minimise m·s subject to s ≥ ‖B̃‖/θ_m, with ‖B̃‖ ≤ τ‖A‖ + 1 (J and the balanced ηW).
 * ‖A‖ is the operator's spectralBound (its energy norm when A is skew-adjoint in the weights).
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, PhiAction, PhiOptions, PhiStats } from "./types.js";
import { highestNonZero, isZero, maxAbs } from "./vector.js";

/**
 * θ_m for double precision (unit roundoff 2^-53): the largest ‖tA‖ for which the degree-m truncated
 * Taylor series meets the backward-error bound, Al-Mohy & Higham (2011), Table 3.1. Quoted from memory
 * of that table; the values at m = 5, 10, …, 55 agree with Al-Mohy & Higham 2011 (their Table 3.1).
 */
export const TAYLOR_THETA: ReadonlyArray<readonly [m: number, theta: number]> = [
  [1, 2.29e-16], [2, 2.58e-8], [3, 1.39e-5], [4, 3.4e-4], [5, 2.4e-3], [6, 9.07e-3], [7, 2.38e-2],
  [8, 5.0e-2], [9, 8.96e-2], [10, 1.44e-1], [11, 2.14e-1], [12, 3.0e-1], [13, 4.0e-1], [14, 5.14e-1],
  [15, 6.41e-1], [16, 7.81e-1], [17, 9.31e-1], [18, 1.09], [19, 1.26], [20, 1.44], [21, 1.62],
  [22, 1.82], [23, 2.01], [24, 2.22], [25, 2.43], [26, 2.64], [27, 2.86], [28, 3.08], [29, 3.31],
  [30, 3.54], [35, 4.7], [40, 6.0], [45, 7.2], [50, 8.5], [55, 9.9],
];

/** The (m, s) of Al-Mohy & Higham's cost minimisation for a norm bound `normB`, written into `out`. */
export function taylorParameters(normB: number, out: { m: number; s: number } = { m: 0, s: 1 }): { m: number; s: number } {
  out.m = 0; out.s = 1;
  if (normB === 0) return out;
  let bestCost = Infinity;
  for (let i = 0; i < TAYLOR_THETA.length; i++) {
    const m = TAYLOR_THETA[i][0], s = Math.max(1, Math.ceil(normB / TAYLOR_THETA[i][1]));
    if (m * s < bestCost) { bestCost = m * s; out.m = m; out.s = s; }
  }
  return out;
}

export function taylorPhi(op: LinearOperator, opts: PhiOptions & { normBound?: number }): PhiAction {
  const normA = opts.normBound ?? op.spectralBound;
  if (!(normA !== undefined && normA >= 0 && Number.isFinite(normA))) {
    throw new SolverError("bad-input", "taylor backend needs a norm bound (operator spectralBound or estimate)", "phi.backend");
  }
  const n = op.n, P = opts.maxPhi, tol = opts.tol;
  const bx = new Float64Array(n), ax = new Float64Array(n);
  const by = new Float64Array(P), ty = new Float64Array(P), fy = new Float64Array(P);
  const wScale = new Float64Array(P); // η τ^{p−c} for column c
  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 0, errorEstimate: NaN, happyBreakdown: false };
  const ms = { m: 0, s: 1 };

  function apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    let reductions = 0;
    const p = highestNonZero(v);
    if (p > P) throw new SolverError("bad-input", `taylor: phi index ${p} exceeds maxPhi ${P}`, "phi.apply");
    if (p < 0) { out.fill(0); stats.matvecs = 0; stats.innerProducts = 0; stats.errorEstimate = 0; return; }
    // balance: η = 2^−⌈log2 max_c ‖τ^{p−c} v_{p−c}‖_∞⌉ (the max-norms are reductions)
    let wn = 0;
    for (let c = 0; c < p; c++) { wn = Math.max(wn, Math.pow(tau, p - c) * maxAbs(v[p - c])); reductions++; }
    const eta = wn > 0 ? Math.pow(2, -Math.ceil(Math.log2(wn))) : 1;
    for (let c = 0; c < p; c++) wScale[c] = eta * Math.pow(tau, p - c);
    taylorParameters(tau * normA! + (p > 0 ? 1 : 0), ms);
    const m = ms.m, s = ms.s;
    // F = b = [v_0; e_p/η]
    out.set(v[0]);
    let xZero = isZero(v[0]);
    for (let c = 0; c < p; c++) fy[c] = c === p - 1 ? 1 / eta : 0;
    for (let step = 0; step < s; step++) {
      bx.set(out);
      for (let c = 0; c < p; c++) by[c] = fy[c];
      let c1 = Math.max(maxAbs(bx), maxAbs(by)); reductions++;
      for (let j = 1; j <= m; j++) {
        const f = 1 / (s * j);
        // b ← B̃ b / (s j)
        if (!xZero) op.apply(ax, bx); else ax.fill(0);
        for (let i = 0; i < n; i++) ax[i] *= tau;
        for (let c = 0; c < p; c++) if (by[c] !== 0) {
          const a = wScale[c] * by[c], vk = v[p - c];
          for (let i = 0; i < n; i++) ax[i] += a * vk[i];
        }
        for (let c = 0; c < p; c++) ty[c] = c + 1 < p ? by[c + 1] : 0;
        let yZero = true;
        for (let c = 0; c < p; c++) { by[c] = f * ty[c]; fy[c] += by[c]; if (by[c] !== 0) yZero = false; }
        let c2 = 0, fn = 0;
        for (let i = 0; i < n; i++) {
          const x = f * ax[i];
          bx[i] = x;
          out[i] += x;
          const a = Math.abs(x); if (a > c2) c2 = a;
          const b = Math.abs(out[i]); if (b > fn) fn = b;
        }
        reductions += 2;
        xZero = c2 === 0;
        if (yZero && c1 + c2 <= (tol / s) * fn) break;
        c1 = c2;
      }
      xZero = isZero(out);
    }
    stats.matvecs = op.counters.matvecs - mv0;
    stats.innerProducts = reductions;
    stats.substeps = s;
    stats.errorEstimate = NaN;
    op.counters.innerProducts += reductions;
  }

  return { name: "taylor", stats, apply };
}
