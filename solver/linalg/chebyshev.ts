/**
 * Chebyshev backend for an operator with spectrum in i[−ρ, ρ] (Tal-Ezer & Kosloff 1984; an exponential filter; common practice, no source).
 *
 * With X = A/(iρ) the real polynomials P_j(A) = i^j T_j(X) satisfy P_0 = I, P_1 = A/ρ,
 * P_{j+1} = (2/ρ) A P_j + P_{j−1}, so everything runs in real arithmetic. A function g on the spectrum,
 * g(x) = G(iρx), with Chebyshev expansion g = Σ c_j T_j and conjugate symmetry g(−x) = conj g(x), gives
 * G(A) = Σ_j a_j P_j(A) with real a_j = (−i)^j c_j.
 *  - e^{τA}: Jacobi–Anger, c_j = 2 i^j J_j(τρ) (j ≥ 1), c_0 = J_0(τρ) (Tal-Ezer & Kosloff 1984,
 *    J. Chem. Phys. 81, 3967–3971), so a_j = 2 J_j(τρ). Bessel values by Miller's downward recurrence
 *    normalised with J_0 + 2 Σ J_{2k} = 1 (Abramowitz & Stegun 9.1.46 and 9.12).
 *  - τ^k φ_k(τA), k ≥ 1, or any filtered term: c_j by Chebyshev interpolation of
 *    g_k(x) = τ^k φ_k(iτρx) σ(ρx) at the Chebyshev points (discrete cosine sums).
 * The whole combination Σ_k g_k(A) v_k = Σ_j P_j(A) u_j, u_j = Σ_k a_{kj} v_k, is summed by Clenshaw's
 * backward recurrence: one matvec per term whatever the number of φ's. Terms are kept while
 * |a_{kj}| > tol/2 · rms(g_k) (rms over the Chebyshev points), which gives K ≈ τρ + O((τρ)^{1/3}).
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, PhiAction, PhiFilter, PhiOptions, PhiStats } from "./types.js";
import { phiComplexAll } from "./scalarPhi.js";
import { highestNonZero, isZero } from "./vector.js";

/**
 * out[k] = J_k(x) for k = 0..kMax (x ≥ 0) by Miller's algorithm started well above max(kMax, x).
 * Allocates its own scratch: not for hot paths (the backend keeps a buffer).
 */
export function besselJ(out: Float64Array, x: number, kMax: number): void {
  const start = millerStart(x, kMax);
  const scratch = new Float64Array(start + 2);
  besselJInto(scratch, x, start);
  for (let k = 0; k <= kMax; k++) out[k] = scratch[k];
}

/** Start index for the downward recurrence: beyond x by 16 x^{1/3} (Airy transition width) plus a margin. */
function millerStart(x: number, kMax: number): number {
  return Math.max(kMax + 20, Math.ceil(x + 16 * Math.cbrt(Math.max(x, 1)) + 50));
}

/** buf[0..start] = J_k(x) by downward recurrence J_{k−1} = (2k/x) J_k − J_{k+1} from J_{start+1} = 0. */
function besselJInto(buf: Float64Array, x: number, start: number): void {
  if (x === 0) {
    buf.fill(0, 0, start + 1);
    buf[0] = 1;
    return;
  }
  let jp = 0, j = 1e-300;
  buf[start] = j;
  for (let k = start; k >= 1; k--) {
    const jm = ((2 * k) / x) * j - jp;
    jp = j; j = jm;
    buf[k - 1] = j;
    if (Math.abs(j) > 1e250) {
      for (let i = k - 1; i <= start; i++) buf[i] *= 1e-250;
      j *= 1e-250; jp *= 1e-250;
    }
  }
  let norm = buf[0];
  for (let k = 2; k <= start; k += 2) norm += 2 * buf[k];
  const s = 1 / norm;
  for (let k = 0; k <= start; k++) buf[k] *= s;
}

/** σ at angular frequency ω: exp(−κ (|ω|/ω_c)^order) (an exponential filter; common practice, no source); 1 without a filter. */
export function filterValue(f: PhiFilter | undefined, omega: number): number {
  if (!f) return 1;
  return Math.exp(-f.strength * Math.pow(Math.abs(omega) / f.cutoff, f.order));
}

export interface ChebyshevPhiAction extends PhiAction {
  /** Number of Chebyshev terms (= matvecs) of the last call. */
  readonly terms: number;
}

export function chebyshevPhi(op: LinearOperator, opts: PhiOptions): ChebyshevPhiAction {
  const rho = op.spectralBound;
  if (!(rho !== undefined && rho > 0 && Number.isFinite(rho))) {
    throw new SolverError("bad-input", "chebyshev backend needs an operator with a positive spectralBound", "phi.backend");
  }
  const n = op.n, P = opts.maxPhi, tol = opts.tol, filter = opts.filter;
  const bA = new Float64Array(n), bB = new Float64Array(n), tmp = new Float64Array(n);
  const cr = new Float64Array(P + 1), ci = new Float64Array(P + 1);
  const vZero = new Uint8Array(P + 1);
  // coefficient and sample buffers; grown (rarely) when a longer τρ than before is requested
  let cap = 0;
  let coef = new Float64Array(0); // coef[k*cap + j] = a_{kj}
  let gRe = new Float64Array(0), gIm = new Float64Array(0), bessel = new Float64Array(0);
  let cosPrev = new Float64Array(0), cosCur = new Float64Array(0), xs = new Float64Array(0);
  const rmsG = new Float64Array(P + 1);
  function ensure(size: number): void {
    if (size <= cap) return;
    cap = Math.max(size, Math.ceil(cap * 1.5));
    coef = new Float64Array((P + 1) * cap);
    gRe = new Float64Array((P + 1) * cap); gIm = new Float64Array((P + 1) * cap);
    bessel = new Float64Array(cap + 2);
    cosPrev = new Float64Array(cap); cosCur = new Float64Array(cap); xs = new Float64Array(cap);
  }
  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 1, errorEstimate: NaN, happyBreakdown: false };
  let terms = 0;

  /** Chebyshev coefficients of g_k(x) = τ^k φ_k(iRx) σ(ρx) on N points, made real: a_{kj} = (−i)^j c_{kj}. */
  function interpolate(tau: number, R: number, p: number, N: number): void {
    for (let l = 0; l < N; l++) {
      const x = Math.cos((Math.PI * (l + 0.5)) / N);
      xs[l] = x;
      phiComplexAll(cr, ci, p, 0, R * x);
      const s = filterValue(filter, rho! * x);
      for (let k = 0; k <= p; k++) {
        const tk = Math.pow(tau, k) * s;
        gRe[k * cap + l] = tk * cr[k];
        gIm[k * cap + l] = tk * ci[k];
      }
    }
    for (let k = 0; k <= p; k++) {
      if (vZero[k]) continue;
      let ms = 0;
      for (let l = 0; l < N; l++) ms += gRe[k * cap + l] ** 2 + gIm[k * cap + l] ** 2;
      rmsG[k] = Math.sqrt(ms / N);
    }
    // c_j = (2/N) Σ_l g(x_l) T_j(x_l) (c_0 with 1/N); T_j(x_l) by T_{j+1} = 2x T_j − T_{j−1}
    for (let l = 0; l < N; l++) { cosPrev[l] = 1; cosCur[l] = xs[l]; }
    for (let j = 0; j < N; j++) {
      const f = (j === 0 ? 1 : 2) / N;
      for (let k = 0; k <= p; k++) {
        if (vZero[k]) { coef[k * cap + j] = 0; continue; }
        let sr = 0, si = 0;
        const T = j === 0 ? cosPrev : cosCur;
        const o = k * cap;
        for (let l = 0; l < N; l++) { sr += gRe[o + l] * T[l]; si += gIm[o + l] * T[l]; }
        sr *= f; si *= f;
        // a_j = (−i)^j c_j
        let a: number;
        if ((j & 1) === 0) a = (j & 2) === 0 ? sr : -sr;
        else a = (j & 2) === 0 ? si : -si;
        coef[o + j] = a;
      }
      if (j >= 1) {
        for (let l = 0; l < N; l++) { const nx = 2 * xs[l] * cosCur[l] - cosPrev[l]; cosPrev[l] = cosCur[l]; cosCur[l] = nx; }
      }
    }
  }

  /** Largest j with |a_{kj}| > tol/2 · rms(g_k) over the non-zero v_k; −1 if none. Sets the tail estimate. */
  function lastTerm(p: number, N: number): number {
    let J = 0, est = 0;
    for (let k = 0; k <= p; k++) {
      if (vZero[k]) continue;
      const thr = 0.3 * tol * rmsG[k];
      let j = N - 1;
      while (j > 0 && Math.abs(coef[k * cap + j]) <= thr) j--;
      let tail = 0;
      for (let i = j + 1; i < N; i++) tail += Math.abs(coef[k * cap + i]);
      est = Math.max(est, rmsG[k] > 0 ? tail / rmsG[k] : 0);
      J = Math.max(J, j);
    }
    stats.errorEstimate = est;
    return J;
  }

  function apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    const p = highestNonZero(v);
    if (p > P) throw new SolverError("bad-input", `chebyshev: phi index ${p} exceeds maxPhi ${P}`, "phi.apply");
    if (p < 0) { out.fill(0); terms = 0; stats.matvecs = 0; stats.errorEstimate = 0; return; }
    for (let k = 0; k <= p; k++) vZero[k] = isZero(v[k]) ? 1 : 0;
    const R = tau * rho!;
    if (R === 0) { out.set(v[0]); terms = 0; stats.matvecs = 0; stats.errorEstimate = 0; return; }
    let J: number;
    const besselOnly = p === 0 && !filter;
    if (besselOnly) {
      const start = millerStart(R, 0);
      ensure(start + 2);
      besselJInto(bessel, R, start);
      coef[0] = bessel[0];
      for (let j = 1; j <= start; j++) coef[j] = 2 * bessel[j];
      rmsG[0] = 1;
      J = lastTerm(0, start + 1);
    } else {
      // interpolate on N points; double N if the coefficients have not decayed by the end
      let N = Math.ceil(R + 16 * Math.cbrt(Math.max(R, 1)) + 40);
      if (filter) N += 20;
      for (;;) {
        ensure(N);
        interpolate(tau, R, p, N);
        J = lastTerm(p, N);
        if (J < N - 8 || N > 64 * (R + 64)) break;
        N *= 2;
      }
    }
    // Clenshaw: b_j = u_j + (2/ρ) A b_{j+1} + b_{j+2};  out = u_0 + (1/ρ) A b_1 + b_2
    let b1 = bA, b2 = bB; // b_{j+1}, b_{j+2}
    b1.fill(0); b2.fill(0);
    const alpha = 2 / rho!;
    for (let j = J; j >= 1; j--) {
      const haveB1 = j < J;
      if (haveB1) op.apply(tmp, b1);
      // new b_j written over b_{j+2}
      for (let i = 0; i < n; i++) {
        let u = 0;
        for (let k = 0; k <= p; k++) if (!vZero[k]) u += coef[k * cap + j] * v[k][i];
        b2[i] = u + (haveB1 ? alpha * tmp[i] : 0) + b2[i];
      }
      const t = b1; b1 = b2; b2 = t;
    }
    // now b1 = b_1, b2 = b_2
    if (J >= 1) op.apply(tmp, b1);
    const inv = 1 / rho!;
    for (let i = 0; i < n; i++) {
      let u = 0;
      for (let k = 0; k <= p; k++) if (!vZero[k]) u += coef[k * cap] * v[k][i];
      out[i] = J >= 1 ? u + inv * tmp[i] + b2[i] : u;
    }
    terms = J;
    stats.matvecs = op.counters.matvecs - mv0;
  }

  return {
    name: "chebyshev",
    stats,
    get terms() { return terms; },
    apply,
  };
}
