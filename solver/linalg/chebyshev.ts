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

  /** Highest φ index in use and the zero flags of v; throws past maxPhi. */
  function scan(v: readonly Float64Array[]): number {
    const p = highestNonZero(v);
    if (p > P) throw new SolverError("bad-input", `chebyshev: phi index ${p} exceeds maxPhi ${P}`, "phi.apply");
    for (let k = 0; k <= p; k++) vZero[k] = isZero(v[k]) ? 1 : 0;
    return p;
  }

  /** Coefficients a_{kj} (in coef, row stride cap) of the combination at τ > 0; returns the last term J. */
  function coefficients(tau: number, p: number): number {
    const R = tau * rho!;
    let J: number;
    if (p === 0 && !filter) {
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
    return J;
  }

  /** out = Σ_j P_j(A) u_j, u_j = Σ_k a_{kj} v_k with a_{kj} = c[base + k·stride + j], by Clenshaw. */
  function clenshaw(out: Float64Array, v: readonly Float64Array[], p: number, J: number, c: Float64Array, base: number, stride: number): void {
    // b_j = u_j + (2/ρ) A b_{j+1} + b_{j+2};  out = u_0 + (1/ρ) A b_1 + b_2
    let b1 = bA, b2 = bB; // b_{j+1}, b_{j+2}
    b1.fill(0); b2.fill(0);
    const alpha = 2 / rho!;
    for (let j = J; j >= 1; j--) {
      const haveB1 = j < J;
      if (haveB1) op.apply(tmp, b1);
      // new b_j written over b_{j+2}
      for (let i = 0; i < n; i++) {
        let u = 0;
        for (let k = 0; k <= p; k++) if (!vZero[k]) u += c[base + k * stride + j] * v[k][i];
        b2[i] = u + (haveB1 ? alpha * tmp[i] : 0) + b2[i];
      }
      const t = b1; b1 = b2; b2 = t;
    }
    // now b1 = b_1, b2 = b_2
    if (J >= 1) op.apply(tmp, b1);
    const inv = 1 / rho!;
    for (let i = 0; i < n; i++) {
      let u = 0;
      for (let k = 0; k <= p; k++) if (!vZero[k]) u += c[base + k * stride] * v[k][i];
      out[i] = J >= 1 ? u + inv * tmp[i] + b2[i] : u;
    }
  }

  function apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    const p = scan(v);
    if (p < 0) { out.fill(0); terms = 0; stats.matvecs = 0; stats.errorEstimate = 0; return; }
    if (tau * rho! === 0) { out.set(v[0]); terms = 0; stats.matvecs = 0; stats.errorEstimate = 0; return; }
    const J = coefficients(tau, p);
    clenshaw(out, v, p, J, coef, 0, cap);
    terms = J;
    stats.matvecs = op.counters.matvecs - mv0;
  }

  // multi-time work: coefficients of every time (grown rarely), and the forward Chebyshev vectors of each v_k
  let multiCoef = new Float64Array(0);
  let lastJ = new Int32Array(0), offsets = new Int32Array(0);
  const fwdA: Float64Array[] = [], fwdB: Float64Array[] = [];
  const cur: Float64Array[] = [], prev: Float64Array[] = [];

  /**
   * outs[i] = Σ_k τ_i^k φ_k(τ_i A) v_k for every τ_i. The Chebyshev vectors P_j(A) v_k do not depend on τ: when
   * (non-zero v_k) × (largest term count) matvecs are fewer than one Clenshaw sum per time, they are formed once
   * by the forward recurrence P_{j+1} = (2/ρ) A P_j + P_{j−1} (bounded: ‖P_j(A)‖ ≤ 1 for the skew A) and every
   * time sums its own coefficients over them; otherwise each time is summed by Clenshaw with its coefficients.
   */
  function applyTimes(outs: readonly Float64Array[], taus: readonly number[], v: readonly Float64Array[]): void {
    const nT = taus.length;
    if (outs.length < nT) throw new SolverError("bad-input", `chebyshev: ${nT} times but ${outs.length} outputs`, "phi.applyTimes");
    const mv0 = op.counters.matvecs;
    const p = scan(v);
    stats.errorEstimate = 0;
    if (p < 0) { for (let i = 0; i < nT; i++) outs[i].fill(0); terms = 0; stats.matvecs = 0; return; }
    if (lastJ.length < nT) { lastJ = new Int32Array(nT); offsets = new Int32Array(nT); }
    // coefficients of each time, rows k = 0..p of length J_i + 1
    let used = 0, Jmax = 0, sumJ = 0, nonZero = 0, est = 0;
    for (let k = 0; k <= p; k++) if (!vZero[k]) nonZero++;
    for (let i = 0; i < nT; i++) {
      const tau = taus[i];
      if (!(Number.isFinite(tau) && tau >= 0)) throw new SolverError("bad-input", `chebyshev: time ${tau} must be finite and ≥ 0`, "phi.applyTimes");
      if (tau * rho! === 0) { lastJ[i] = -1; continue; }
      const J = coefficients(tau, p);
      est = Math.max(est, stats.errorEstimate);
      const size = (p + 1) * (J + 1);
      if (multiCoef.length < used + size) {
        const grown = new Float64Array(Math.max(used + size, Math.ceil(multiCoef.length * 1.5)));
        grown.set(multiCoef.subarray(0, used));
        multiCoef = grown;
      }
      for (let k = 0; k <= p; k++) for (let j = 0; j <= J; j++) multiCoef[used + k * (J + 1) + j] = vZero[k] ? 0 : coef[k * cap + j];
      offsets[i] = used; lastJ[i] = J;
      used += size; Jmax = Math.max(Jmax, J); sumJ += J;
    }
    if (nonZero * Jmax >= sumJ) {
      for (let i = 0; i < nT; i++) {
        if (lastJ[i] < 0) outs[i].set(v[0]);
        else clenshaw(outs[i], v, p, lastJ[i], multiCoef, offsets[i], lastJ[i] + 1);
      }
    } else {
      for (let k = 0; k <= p; k++) {
        if (fwdA.length <= k) { fwdA.push(new Float64Array(n)); fwdB.push(new Float64Array(n)); }
        cur[k] = v[k]; prev[k] = v[k];
      }
      cur.length = p + 1; prev.length = p + 1;
      for (let i = 0; i < nT; i++) if (lastJ[i] < 0) outs[i].set(v[0]); else outs[i].fill(0);
      for (let j = 0; j <= Jmax; j++) {
        if (j >= 1) {
          // P_j v_k from P_{j−1} (cur) and P_{j−2} (prev): j = 1 into fwdA, j = 2 into fwdB, then over P_{j−2} in place
          for (let k = 0; k <= p; k++) {
            if (vZero[k]) continue;
            op.apply(tmp, cur[k]);
            const target = j === 1 ? fwdA[k] : j === 2 ? fwdB[k] : prev[k];
            if (j === 1) for (let q = 0; q < n; q++) target[q] = tmp[q] / rho!;
            else for (let q = 0; q < n; q++) target[q] = (2 / rho!) * tmp[q] + prev[k][q];
            prev[k] = cur[k]; cur[k] = target;
          }
        }
        for (let i = 0; i < nT; i++) {
          const J = lastJ[i];
          if (j > J) continue;
          const o = outs[i], base = offsets[i] + j, stride = J + 1;
          for (let k = 0; k <= p; k++) {
            if (vZero[k]) continue;
            const a = multiCoef[base + k * stride];
            if (a === 0) continue;
            const pk = cur[k];
            for (let q = 0; q < n; q++) o[q] += a * pk[q];
          }
        }
      }
    }
    terms = Jmax;
    stats.errorEstimate = est;
    stats.matvecs = op.counters.matvecs - mv0;
  }

  return {
    name: "chebyshev",
    stats,
    get terms() { return terms; },
    apply,
    applyTimes,
  };
}
