/**
 * Sub-stepping backend, the split-explicit analogue (common practice, no source): integrate
 *   y' = A y + Σ_{k=1}^{p} t^{k−1}/(k−1)! v_k,  y(0) = v_0,  over [0, τ],
 * whose solution is y(τ) = Σ_k τ^k φ_k(τA) v_k (Hochbruck & Ostermann 2010), with S classical RK4 steps
 * (Kutta 1901). Without a given `substeps` count, S makes h = τ/S satisfy hρ ≤ 1 and
 * τρ (hρ)^4/120 ≤ tol/2: the RK4 stability function differs from e^z by z^5/120 + O(z^6) (Taylor
 * expansion of R(z) = 1 + z + z²/2 + z³/6 + z⁴/24; common practice, no source), and that phase/amplitude
 * error accumulates over τρ/(hρ) steps at the highest frequency ρ. Four matvecs per sub-step, no inner products.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, PhiAction, PhiOptions, PhiStats } from "./types.js";
import { highestNonZero } from "./vector.js";
import { inverseFactorial } from "./scalarPhi.js";

/** Number of RK4 sub-steps for τρ at tolerance tol (the rule in the module comment). */
export function rk4Substeps(tauRho: number, tol: number): number {
  if (tauRho <= 0) return 1;
  const hRho = Math.min(1, Math.pow((60 * tol) / tauRho, 0.25));
  return Math.max(1, Math.ceil(tauRho / hRho));
}

export function substepPhi(op: LinearOperator, opts: PhiOptions): PhiAction {
  const rho = op.spectralBound;
  const fixed = opts.substeps ?? 0;
  if (!(fixed > 0) && !(rho !== undefined && rho > 0)) {
    throw new SolverError("bad-input", "substep backend needs a spectralBound or a positive substeps count", "phi.substeps");
  }
  const n = op.n, P = opts.maxPhi, tol = opts.tol;
  const acc = new Float64Array(n), stage = new Float64Array(n), k = new Float64Array(n), y0 = new Float64Array(n);
  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 0, errorEstimate: NaN, happyBreakdown: false };
  let p = 0;
  let vv: readonly Float64Array[] = [];

  /** k = A x + f(t), f(t) = Σ_{k≥1} t^{k−1}/(k−1)! v_k */
  function slope(x: Float64Array, t: number): void {
    op.apply(k, x);
    for (let j = 1; j <= p; j++) {
      const c = Math.pow(t, j - 1) * inverseFactorial(j - 1), vj = vv[j];
      if (c !== 0) for (let i = 0; i < n; i++) k[i] += c * vj[i];
    }
  }

  function apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    p = Math.max(0, highestNonZero(v));
    if (p > P) throw new SolverError("bad-input", `substep: phi index ${p} exceeds maxPhi ${P}`, "phi.apply");
    vv = v;
    const S = fixed > 0 ? fixed : rk4Substeps(tau * rho!, tol);
    const h = tau / S;
    const y = out;
    if (v.length > 0) y0.set(v[0]); else y0.fill(0);
    y.set(y0);
    for (let s = 0; s < S; s++) {
      const t = s * h;
      acc.set(y);
      slope(y, t);
      for (let i = 0; i < n; i++) { acc[i] += (h / 6) * k[i]; stage[i] = y[i] + 0.5 * h * k[i]; }
      slope(stage, t + 0.5 * h);
      for (let i = 0; i < n; i++) { acc[i] += (h / 3) * k[i]; stage[i] = y[i] + 0.5 * h * k[i]; }
      slope(stage, t + 0.5 * h);
      for (let i = 0; i < n; i++) { acc[i] += (h / 3) * k[i]; stage[i] = y[i] + h * k[i]; }
      slope(stage, t + h);
      for (let i = 0; i < n; i++) y[i] = acc[i] + (h / 6) * k[i];
    }
    vv = [];
    stats.matvecs = op.counters.matvecs - mv0;
    stats.innerProducts = 0;
    stats.substeps = S;
    stats.errorEstimate = rho !== undefined ? (tau * rho * Math.pow(h * rho, 4)) / 120 : NaN;
  }

  return { name: "substep", stats, apply };
}
