/**
 * "rational-damped": φ-functions of a skew operator A that keep the waves below a cut-off frequency ω_c
 * accurate and damp those above it, at a cost that does not grow with τρ.
 *
 *   out = Σ_k τ^k σ(A) φ_k(τA) v_k,     σ(iω) = exp(−κ (|ω|/ω_d)^{2p}),   ω_d = ω_c (κ/tol)^{1/(2p)},
 *
 * so that 1 − σ ≤ tol for |ω| ≤ ω_c (those waves are kept to the tolerance) and σ ≤ e^{−κ} for |ω| ≥ ω_d (damped
 * to round-off with the default κ = 36). Options: `filter.cutoff` = ω_c [1/s], `filter.order` = 2p (default 16),
 * `filter.strength` = κ.
 *
 * Method: with S = −A² (self-adjoint and positive semi-definite in the weights where A is skew-adjoint), every
 * analytic f splits as f(τA) = E(τ²A²) + τA·O(τ²A²) with E(−x²) = Re f(ix), O(−x²) = Im f(ix)/x. Both parts are
 * functions of S, approximated in the Lanczos space of the resolvent Y = (I + c²S)⁻¹ = (I − cA)⁻¹(I + cA)⁻¹
 * with c = 1/ω_d (a shift-and-invert Lanczos; van den Eshof & Hochbruck, SIAM J. Sci. Comput. 27 (2006)
 * 1438–1457, for the idea of resolvent Krylov spaces for matrix functions). Ritz values θ of Y give
 * frequencies ω = √(1/θ − 1)/c. In θ the damped targets are smooth (the frequencies above ω_d, crowded near θ = 0,
 * are mapped to 0), so the Lanczos dimension depends on τω_c and the tolerance, not on τρ. Each step costs two
 * shifted solves (the operator's `shiftedSolve`, a sparse factorization per shift, computed once).
 *
 * Increment form is kept by the callers (φ-actions act on tendencies), so layer mass stays exact.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, PhiAction, PhiOptions, PhiStats } from "./types.js";
import { inverseFactorial, phiComplexAll } from "./scalarPhi.js";
import { symmetricTridiagonalEigen } from "./tridiagonalEigen.js";

/** The damping frequency ω_d of the cut-off ω_c, tolerance, order 2p and strength κ (see the file comment). */
export function dampingFrequency(cutoff: number, tol: number, order: number, strength: number): number {
  return cutoff * Math.pow(Math.max(strength, 1e-300) / tol, 1 / order);
}

/** σ(iω) of the damped backend. */
export function dampingFactor(omega: number, omegaD: number, order: number, strength: number): number {
  return Math.exp(-strength * Math.pow(Math.abs(omega) / omegaD, order));
}

/** Even and odd parts of φ_k at iξ: E = Re φ_k(iξ), O = Im φ_k(iξ)/ξ (series for small ξ). */
function evenOdd(outE: Float64Array, outO: Float64Array, p: number, xi: number, wr: Float64Array, wi: Float64Array): void {
  if (xi < 0.25) {
    const x2 = xi * xi;
    for (let k = 0; k <= p; k++) {
      let e = 0, o = 0, t = 1;
      for (let j = 0; j < 12; j++) {
        e += t * inverseFactorial(2 * j + k);
        o += t * inverseFactorial(2 * j + 1 + k);
        t *= -x2;
      }
      outE[k] = e; outO[k] = o;
    }
    return;
  }
  phiComplexAll(wr, wi, p, 0, xi);
  for (let k = 0; k <= p; k++) { outE[k] = wr[k]; outO[k] = wi[k] / xi; }
}

export function rationalDampedPhi(op: LinearOperator, opts: PhiOptions): PhiAction {
  const pf = opts.field ?? "phi";
  const maybeSolve = op.shiftedSolve?.bind(op);
  if (!op.skew || !maybeSolve) throw new SolverError("bad-input", `${pf}.backend: rational-damped needs a skew operator with shifted solves (linear rest or modes:N)`, `${pf}.backend`);
  const f = opts.filter;
  if (!f || !(f.cutoff > 0) || !Number.isFinite(f.cutoff)) throw new SolverError("bad-input", `${pf}.filter.cutoff: rational-damped needs a cut-off frequency > 0 [1/s]`, `${pf}.filter.cutoff`);
  const solve: (y: Float64Array, c: Float64Array, gamma: number) => void = maybeSolve;
  const n = op.n, P = opts.maxPhi, tol = opts.tol, w = op.weights;
  const order = f.order, strength = f.strength;
  const omegaD = dampingFrequency(f.cutoff, tol, order, strength);
  const c = 1 / omegaD;
  const mMax = opts.maxKrylovDim ?? 100;
  // work arrays, allocated once
  const V: Float64Array[] = [];
  for (let j = 0; j <= mMax; j++) V.push(new Float64Array(n));
  const tmp = new Float64Array(n), oAcc = new Float64Array(n), Ao = new Float64Array(n);
  const alpha = new Float64Array(mMax), beta = new Float64Array(mMax + 1);
  const d = new Float64Array(mMax), e = new Float64Array(mMax), Z = new Float64Array(mMax * mMax);
  const yE = new Float64Array(mMax), yO = new Float64Array(mMax), yEold = new Float64Array(mMax), yOold = new Float64Array(mMax);
  const eE = new Float64Array(P + 2), eO = new Float64Array(P + 2), wr = new Float64Array(P + 2), wi = new Float64Array(P + 2);
  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 0, errorEstimate: NaN, happyBreakdown: false };
  let ips = 0;

  const dotW = (a: Float64Array, b: Float64Array): number => {
    ips++;
    let s = 0;
    if (w) for (let i = 0; i < n; i++) s += w[i] * a[i] * b[i];
    else for (let i = 0; i < n; i++) s += a[i] * b[i];
    return s;
  };

  /** Coefficients in the Lanczos basis of E and O parts (times σ, τ^k) after m steps; returns false if QR failed. */
  function coefficients(m: number, k: number, tau: number): boolean {
    for (let i = 0; i < m; i++) { d[i] = alpha[i]; if (i + 1 < m) e[i] = beta[i + 1]; }
    Z.fill(0, 0, m * m);
    for (let i = 0; i < m; i++) Z[i * m + i] = 1;
    if (!symmetricTridiagonalEigen(d, e, m, Z, m)) return false;
    yE.fill(0, 0, m); yO.fill(0, 0, m);
    const tk = Math.pow(tau, k);
    for (let i = 0; i < m; i++) {
      const theta = d[i];
      const omega = theta > 0 ? Math.sqrt(Math.max(0, 1 / theta - 1)) / c : Infinity;
      const sigma = Number.isFinite(omega) ? dampingFactor(omega, omegaD, order, strength) : 0;
      if (sigma === 0) continue;
      evenOdd(eE, eO, k, tau * omega, wr, wi);
      const s0 = Z[0 * m + i]; // first component of eigenvector i
      const ce = tk * sigma * eE[k] * s0, co = tk * sigma * eO[k] * s0;
      for (let r = 0; r < m; r++) { yE[r] += Z[r * m + i] * ce; yO[r] += Z[r * m + i] * co; }
    }
    return true;
  }

  function apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    ips = 0;
    if (v.length > P + 1) throw new SolverError("bad-input", `${pf}.maxPhi: rational-damped got phi index ${v.length - 1}, more than maxPhi ${P}`, `${pf}.maxPhi`);
    out.fill(0); oAcc.fill(0);
    let worst = 0, totalSteps = 0;
    stats.happyBreakdown = false;
    for (let k = 0; k < v.length; k++) {
      const vk = v[k];
      const b0 = Math.sqrt(dotW(vk, vk));
      if (!(b0 > 0)) continue;
      const q0 = V[0];
      for (let i = 0; i < n; i++) q0[i] = vk[i] / b0;
      beta[0] = 0;
      let m = 0, converged = false, err = Infinity;
      let haveOld = false;
      while (m < mMax) {
        // w = Y q_m = (I − cA)⁻¹ (I + cA)⁻¹ q_m
        const qm = V[m], wv = V[m + 1];
        solve(tmp, qm, -c);
        solve(wv, tmp, c);
        const a = dotW(wv, qm);
        alpha[m] = a;
        for (let i = 0; i < n; i++) wv[i] -= a * qm[i] + (m > 0 ? beta[m] * V[m - 1][i] : 0);
        // full re-orthogonalisation (twice is enough; Parlett, The Symmetric Eigenvalue Problem, 1980)
        for (let pass = 0; pass < 2; pass++) {
          for (let j = 0; j <= m; j++) {
            const h = dotW(wv, V[j]);
            const vj = V[j];
            for (let i = 0; i < n; i++) wv[i] -= h * vj[i];
          }
        }
        const bn = Math.sqrt(dotW(wv, wv));
        m++;
        const breakdown = !(bn > 1e-14 * Math.abs(a));
        if (!breakdown) { beta[m] = bn; for (let i = 0; i < n; i++) wv[i] /= bn; }
        if (m >= 2 || breakdown) {
          if (!coefficients(m, k, tau)) throw new SolverError("breakdown", "rational-damped: tridiagonal eigenvalue iteration did not converge");
          if (haveOld) {
            // change of the result since the previous size, in the weighted norm of the basis (orthonormal)
            let dE = 0, dO = 0, nE = 0;
            for (let r = 0; r < m; r++) {
              const oe = r < m - 1 ? yEold[r] : 0, oo = r < m - 1 ? yOold[r] : 0;
              dE += (yE[r] - oe) ** 2; dO += (yO[r] - oo) ** 2; nE += yE[r] ** 2;
            }
            // the odd part is multiplied by τA later: its frequencies are below about ω_d after damping
            err = (Math.sqrt(dE) + tau * omegaD * Math.sqrt(dO)) / Math.max(Math.sqrt(nE), 1e-300);
            if (err <= tol) converged = true;
          }
          yEold.set(yE.subarray(0, m)); yOold.set(yO.subarray(0, m));
          haveOld = true;
        }
        if (breakdown) { converged = true; stats.happyBreakdown = true; err = 0; }
        if (converged) break;
      }
      if (!converged) throw new SolverError("breakdown", `rational-damped: no convergence to ${tol} in ${mMax} Lanczos steps (last change ${err.toExponential(2)}); raise the cut-off's damping or maxKrylovDim`);
      worst = Math.max(worst, err);
      totalSteps += m;
      for (let r = 0; r < m; r++) {
        const ce = b0 * yE[r], co = b0 * yO[r], vr = V[r];
        for (let i = 0; i < n; i++) { out[i] += ce * vr[i]; oAcc[i] += co * vr[i]; }
      }
    }
    op.apply(Ao, oAcc);
    for (let i = 0; i < n; i++) out[i] += tau * Ao[i];
    stats.matvecs = op.counters.matvecs - mv0;
    stats.innerProducts = ips;
    stats.substeps = totalSteps;
    stats.errorEstimate = worst;
    op.counters.innerProducts += ips;
  }

  return { name: "rational-damped", stats, apply };
}
