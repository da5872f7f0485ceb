/**
 * Rational (contour-integral) backend for skew operators (Trefethen, Weideman & Schmelzer 2006):
 *   Σ_k g_k(B) v_k = (1/2πi) ∮_Γ (zI − B)⁻¹ Σ_k g_k(z) v_k dz,   B = τA,  g_k(z) = τ^k φ_k(z),
 * with the trapezoid rule on an ellipse Γ: z(θ) = a cos θ + i b sin θ, a = R sinh η, b = R cosh η,
 * whose foci ±iR (R = τρ) are the ends of the spectral segment (the idea of evaluating matrix functions
 * by trapezoid rules on contours is that of Trefethen, Weideman & Schmelzer 2006, BIT 46, 653–670; their
 * Talbot contours suit a negative real spectrum, not an imaginary one). In the elliptic coordinate the
 * integrand is analytic in a strip of half-width η around the contour, so N nodes give an error of about
 * e^{−Nη}, the growth of e^z beyond Γ adds a second term (see contourParameters) [D]; |g| ≤ e^{a} on Γ
 * amplifies rounding, so a is capped (e^{a} ≤ √(tol/ε)). Nodes come in conjugate pairs, so N/2
 * complex solves (the weights of a real operator and real data at z̄ are the conjugates of those at z).
 *
 * Solves. When the operator offers complex shifted solves (`complexShiftedSolver`: the fixed linear parts, a
 * sparse LU per pole, cached — the poles depend only on τρ and the tolerance, so a fixed Δt reuses them every
 * step), (z − B) x = r is solved as (z/τ − A) x = r/τ with them; the set of N/2 factorizations is checked
 * against the operator's memory and work bound before the first is made. LU without pivoting is safe for these
 * poles but its growth rises near Re z = 0 (sparseLu.ts), so the residual is checked (two products) and up to
 * two steps of iterative refinement are taken while it is above the target (Wilkinson's iterative refinement;
 * Golub & Van Loan, Matrix Computations, 4th ed. 2013, §3.5.3). Otherwise each solve is matrix-free restarted
 * GMRES (Saad & Schultz 1986, SIAM J. Sci. Stat. Comput. 7, 856–869) on the equivalent real system of size 2n,
 * two matvecs per step.
 * Limits: the number of poles grows linearly with τρ. With GMRES the iterations per solve grow with the
 * conditioning near the ends of the segment (small problems and cross-checks only); with factorizations the
 * memory grows as N/2 × the fill of one.
 */
import { SolverError } from "../errors.js";
import type { ComplexShifts, LinearOperator, PhiAction, PhiOptions, PhiStats } from "./types.js";
import { phiComplexAll } from "./scalarPhi.js";
import { highestNonZero, isZero } from "./vector.js";

const EPS = 2.220446049250313e-16;

export interface ContourParameters { eta: number; nodes: number; a: number; b: number }

/** Is min_{δ>0} R sinh(η+δ) − Nδ ≤ −L (outer error term of contourParameters)? */
function outerOk(N: number, R: number, eta: number, L: number): boolean {
  const c = N / R;
  if (c <= Math.cosh(eta)) return false;
  const d = Math.acosh(c) - eta;
  return R * Math.sinh(eta + d) - N * d <= -L;
}

/**
 * Ellipse parameter η and node count N (even) for R = τρ at tolerance tol. Two error terms of the
 * trapezoid rule [D]: the poles on the segment give e^{−Nη}; the growth of e^z outside Γ gives
 * min_δ exp(R sinh(η+δ) − Nδ) (shift the contour outwards by δ in the elliptic coordinate). Both must be
 * ≤ tol/10, and a = R sinh η ≤ aMax bounds the rounding amplification e^a. The smallest N over a grid
 * of η is taken.
 */
export function contourParameters(R: number, tol: number, out: ContourParameters = { eta: 0, nodes: 0, a: 0, b: 0 }): ContourParameters {
  const L = Math.log(10 / tol);
  const aMax = Math.max(2, 0.5 * Math.log(tol / EPS));
  let bestN = Infinity, bestEta = 1;
  const etaMax = Math.asinh(aMax / R);
  for (let i = 0; i <= 240; i++) {
    const eta = etaMax * Math.pow(1e-4, i / 240);
    let lo = Math.max(2, Math.ceil(L / eta)), hi = Math.max(lo, 8);
    while (!outerOk(hi, R, eta, L)) { hi *= 2; if (hi > 1e7) break; }
    if (hi > 1e7) continue;
    while (lo < hi) { const mid = (lo + hi) >> 1; if (outerOk(mid, R, eta, L)) hi = mid; else lo = mid + 1; }
    if (hi < bestN) { bestN = hi; bestEta = eta; }
  }
  let nodes = bestN + 2;
  if (nodes % 2 === 1) nodes++;
  out.eta = bestEta; out.nodes = nodes; out.a = R * Math.sinh(bestEta); out.b = R * Math.cosh(bestEta);
  return out;
}

export interface RationalOptions extends PhiOptions {
  /** GMRES restart length (default min(2n, 60)). */
  restart?: number;
  /** Maximum GMRES restarts per solve (default 40). */
  maxRestarts?: number;
  /** Use the operator's complex shifted solves when it has them (default true; false forces GMRES). */
  direct?: boolean;
  /** Iterative-refinement steps allowed per direct solve (default 2). */
  refinementSteps?: number;
}

/** Per-call detail of the rational backend (the last `apply`). */
export interface RationalStats extends PhiStats {
  /** "direct" (factorizations) or "gmres". */
  solver: "direct" | "gmres";
  /** Refinement steps taken over all poles. */
  refinements: number;
}

export function rationalPhi(op: LinearOperator, opts: RationalOptions): PhiAction {
  const rho = op.spectralBound;
  if (!op.skew || !(rho !== undefined && rho > 0)) {
    throw new SolverError("bad-input", "rational backend needs a skew operator with a spectralBound", "phi.backend");
  }
  const n = op.n, P = opts.maxPhi, tol = opts.tol, N2 = 2 * n;
  const mg = Math.max(1, Math.min(opts.restart ?? 60, N2));
  const maxRestarts = opts.maxRestarts ?? 40;
  const w = op.weights;
  // GMRES work on the 2n real form, allocated once
  const basis = new Float64Array((mg + 1) * N2);
  const Vg: Float64Array[] = [];
  const VgRe: Float64Array[] = [], VgIm: Float64Array[] = [];
  for (let j = 0; j <= mg; j++) {
    Vg.push(basis.subarray(j * N2, (j + 1) * N2));
    VgRe.push(Vg[j].subarray(0, n)); VgIm.push(Vg[j].subarray(n, N2));
  }
  const H = new Float64Array((mg + 1) * mg);
  const cs = new Float64Array(mg), sn = new Float64Array(mg), g = new Float64Array(mg + 1), yk = new Float64Array(mg);
  const x = new Float64Array(N2), r = new Float64Array(N2), rhs = new Float64Array(N2), tmpA = new Float64Array(n), tmpB = new Float64Array(n);
  const xRe = x.subarray(0, n), xIm = x.subarray(n, N2), rRe = r.subarray(0, n), rIm = r.subarray(n, N2);
  const vZero = new Uint8Array(P + 1);
  const contour: ContourParameters = { eta: 0, nodes: 0, a: 0, b: 0 };
  const cr = new Float64Array(P + 1), ci = new Float64Array(P + 1);
  const wr = new Float64Array(P + 1), wi = new Float64Array(P + 1);
  const direct: ComplexShifts | undefined = opts.direct === false ? undefined : op.complexShiftedSolver?.();
  const refinementSteps = Math.max(0, opts.refinementSteps ?? 2);
  const pf = opts.field ?? "phi";
  // the last two τ values and their pole counts: their factorizations must fit together, so that a stepper
  // alternating two step sizes (e.g. h/2 and h) does not refactor every call
  let tauA = NaN, polesA = 0, tauB = NaN, polesB = 0;
  const stats: RationalStats = {
    matvecs: 0, innerProducts: 0, substeps: 0, errorEstimate: NaN, happyBreakdown: false, solver: direct ? "direct" : "gmres", refinements: 0,
  };
  let ips = 0;
  let worstResidual = 0;

  // weighted inner product on the 2n real form (the same weights for real and imaginary parts)
  function dot2(a: Float64Array, b: Float64Array): number {
    ips++;
    let s = 0;
    if (w) for (let i = 0; i < n; i++) s += w[i] * (a[i] * b[i] + a[n + i] * b[n + i]);
    else for (let i = 0; i < N2; i++) s += a[i] * b[i];
    return s;
  }

  /** out = M x for M = [[zr − B, −zi], [zi, zr − B]], B = τA; xRe/xIm are views of the halves of xx. */
  function applyShifted(out: Float64Array, xx: Float64Array, re: Float64Array, im: Float64Array, zr: number, zi: number, tau: number): void {
    op.apply(tmpA, re);
    op.apply(tmpB, im);
    for (let i = 0; i < n; i++) {
      const xr = xx[i], xi = xx[n + i];
      out[i] = zr * xr - tau * tmpA[i] - zi * xi;
      out[n + i] = zi * xr + zr * xi - tau * tmpB[i];
    }
  }

  /** Solve M x = rhs to relative residual rtol by restarted GMRES (x starts at 0). */
  function gmres(zr: number, zi: number, tau: number, rtol: number): void {
    x.fill(0);
    const bnorm = Math.sqrt(dot2(rhs, rhs));
    if (bnorm === 0) return;
    let resid = bnorm;
    for (let cycle = 0; cycle < maxRestarts && resid > rtol * bnorm; cycle++) {
      // r = rhs − M x
      if (cycle === 0) r.set(rhs);
      else { applyShifted(r, x, xRe, xIm, zr, zi, tau); for (let i = 0; i < N2; i++) r[i] = rhs[i] - r[i]; }
      const beta = Math.sqrt(dot2(r, r));
      if (beta === 0) { resid = 0; break; }
      for (let i = 0; i < N2; i++) Vg[0][i] = r[i] / beta;
      g.fill(0); g[0] = beta;
      let k = 0;
      for (; k < mg; k++) {
        const vk1 = Vg[k + 1];
        applyShifted(vk1, Vg[k], VgRe[k], VgIm[k], zr, zi, tau);
        for (let pass = 0; pass < 2; pass++) {
          for (let i = 0; i <= k; i++) {
            const c = dot2(vk1, Vg[i]);
            if (pass === 0) H[i * mg + k] = c; else H[i * mg + k] += c;
            const vi = Vg[i];
            for (let q = 0; q < N2; q++) vk1[q] -= c * vi[q];
          }
        }
        const hk1 = Math.sqrt(dot2(vk1, vk1));
        H[(k + 1) * mg + k] = hk1;
        if (hk1 > 0) for (let q = 0; q < N2; q++) vk1[q] /= hk1;
        // apply previous Givens rotations, then a new one zeroing H[k+1,k]
        for (let i = 0; i < k; i++) {
          const a = H[i * mg + k], b = H[(i + 1) * mg + k];
          H[i * mg + k] = cs[i] * a + sn[i] * b;
          H[(i + 1) * mg + k] = -sn[i] * a + cs[i] * b;
        }
        const a = H[k * mg + k], b = H[(k + 1) * mg + k];
        const rr = Math.hypot(a, b);
        cs[k] = rr === 0 ? 1 : a / rr; sn[k] = rr === 0 ? 0 : b / rr;
        H[k * mg + k] = rr; H[(k + 1) * mg + k] = 0;
        g[k + 1] = -sn[k] * g[k]; g[k] = cs[k] * g[k];
        resid = Math.abs(g[k + 1]);
        if (resid <= rtol * bnorm || hk1 === 0) { k++; break; }
      }
      // x += V y, H y = g (upper triangular k×k)
      for (let i = k - 1; i >= 0; i--) {
        let s = g[i];
        for (let j = i + 1; j < k; j++) s -= H[i * mg + j] * yk[j];
        yk[i] = s / H[i * mg + i];
      }
      for (let j = 0; j < k; j++) { const c = yk[j], vj = Vg[j]; for (let q = 0; q < N2; q++) x[q] += c * vj[q]; }
    }
    worstResidual = Math.max(worstResidual, resid / bnorm);
  }

  /** Solve M x = rhs (M as in applyShifted) with the operator's factorizations, refining while the residual is above rtol. */
  function directSolve(solver: ComplexShifts, zr: number, zi: number, tau: number, rtol: number): void {
    const inv = 1 / tau;
    for (let i = 0; i < N2; i++) r[i] = rhs[i] * inv;
    solver.solve(xRe, xIm, rRe, rIm, zr * inv, zi * inv);
    const bnorm = Math.sqrt(dot2(rhs, rhs));
    if (bnorm === 0) return;
    let resid = Infinity;
    for (let step = 0; ; step++) {
      applyShifted(r, x, xRe, xIm, zr, zi, tau);
      for (let i = 0; i < N2; i++) r[i] = (rhs[i] - r[i]) * inv;
      resid = (tau * Math.sqrt(dot2(r, r))) / bnorm;
      if (!(resid > rtol) || step >= refinementSteps) break;
      // correction d = (z/τ − A)⁻¹ (residual/τ), x += d
      solver.solve(tmpA, tmpB, rRe, rIm, zr * inv, zi * inv);
      for (let i = 0; i < n; i++) { xRe[i] += tmpA[i]; xIm[i] += tmpB[i]; }
      stats.refinements++;
    }
    worstResidual = Math.max(worstResidual, resid);
  }

  function apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    ips = 0; worstResidual = 0;
    const p = highestNonZero(v);
    if (p > P) throw new SolverError("bad-input", `rational: phi index ${p} exceeds maxPhi ${P}`, "phi.apply");
    out.fill(0);
    if (p < 0 || tau === 0) { if (p >= 0) out.set(v[0]); stats.matvecs = 0; stats.substeps = 0; stats.errorEstimate = 0; return; }
    const R = tau * rho!;
    contourParameters(R, tol, contour);
    const nodes = contour.nodes, a = contour.a, b = contour.b;
    for (let k = 0; k <= p; k++) vZero[k] = isZero(v[k]) ? 1 : 0;
    const rtol = Math.max(1e-15, 0.01 * tol * Math.exp(-a));
    stats.refinements = 0;
    if (direct && tau !== tauA && tau !== tauB) {
      const other = Number.isNaN(tauA) ? 0 : polesA;
      direct.reserve(nodes / 2 + other, `the rational backend (${pf}.backend) at τρ = ${R.toPrecision(3)}${other ? ` and ${(tauA * rho!).toPrecision(3)}` : ""}`);
      tauB = tauA; polesB = polesA; tauA = tau; polesA = nodes / 2;
    } else if (direct && tau === tauB) {
      const t = tauA, p2 = polesA; tauA = tauB; polesA = polesB; tauB = t; polesB = p2;
    }
    for (let j = 0; j < nodes / 2; j++) {
      const th = (2 * Math.PI * (j + 0.5)) / nodes;
      const zr = a * Math.cos(th), zi = b * Math.sin(th);
      const dzr = -a * Math.sin(th), dzi = b * Math.cos(th);
      phiComplexAll(cr, ci, p, zr, zi);
      // weight_k = τ^k φ_k(z) z'(θ) / (i N), times 2 for the conjugate node
      for (let k = 0; k <= p; k++) {
        const tk = Math.pow(tau, k);
        const pr = tk * (cr[k] * dzr - ci[k] * dzi), pi = tk * (cr[k] * dzi + ci[k] * dzr);
        // divide by i N: (pr + i pi)/(i N) = (pi − i pr)/N
        wr[k] = (2 * pi) / nodes; wi[k] = (-2 * pr) / nodes;
      }
      rhs.fill(0);
      for (let k = 0; k <= p; k++) {
        if (vZero[k]) continue;
        const vk = v[k];
        for (let i = 0; i < n; i++) { rhs[i] += wr[k] * vk[i]; rhs[n + i] += wi[k] * vk[i]; }
      }
      if (direct) directSolve(direct, zr, zi, tau, rtol);
      else gmres(zr, zi, tau, rtol);
      for (let i = 0; i < n; i++) out[i] += x[i];
    }
    stats.matvecs = op.counters.matvecs - mv0;
    stats.innerProducts = ips;
    stats.substeps = nodes / 2;
    stats.errorEstimate = worstResidual;
    op.counters.innerProducts += ips;
  }

  return { name: "rational", stats, apply };
}
