/**
 * Krylov backend for out = Σ_{k=0}^{p} τ^k φ_k(τA) v_k (Saad 1992; Hochbruck & Lubich 1997; common practice, no source).
 *
 * Reduction to one vector (Niesen & Wright 2012, ACM TOMS 38(3) Art. 22, §2): with w_0 = v_0 and
 * w_j = A w_{j−1} + v_j, the combination is the solution u(t) of u' = A u + Σ_{k≥1} t^{k−1}/(k−1)! v_k,
 * u(0) = v_0, and u(t) = Σ_{j<p} t^j/j! w_j + t^p φ_p(tA) w_p; the derivatives u^{(j)}(t) are given by the
 * same formula with φ_{p−j}. So only φ_*(hA) w_p is needed from the Krylov space, and time sub-steps
 * h_1 + h_2 + … = τ restart from the new derivatives w_j at no extra matvecs.
 *
 * Arnoldi runs in the operator's inner product (weights w: <a,b> = Σ w_i a_i b_i). When A is skew-adjoint
 * in it (the interface's promise when `weights` is given, or `skew` without weights) the process is a
 * Lanczos recurrence: H is skew tridiagonal, each new vector is orthogonalized against the previous two
 * only, twice (incomplete orthogonalization as in Gaudreault, Rainwater & Tokman 2018), and the small
 * matrix function comes from the eigen-decomposition of the symmetric tridiagonal S with H = D(−iS)D⁻¹,
 * D = diag(i^j). If the computed coefficients are not skew (an operator that breaks the promise), the
 * call is redone with full Arnoldi and a dense augmented exponential of the Hessenberg matrix.
 *
 * Error estimate (Saad 1992, SIAM J. Numer. Anal. 29, 209–228, §5.2, generalised to φ_p): the error of
 * h^p φ_p(hA) w_p ≈ β V h^p φ_p(hH) e_1 is about β h_{m+1,m} h^{p+1} |e_mᵀ φ_{p+1}(hH) e_1|. A sub-step is
 * accepted when that is ≤ ½ tol (h/τ) ‖u(t+h)‖; when the basis reaches maxDim first, the largest h
 * meeting the test with the basis already built is taken and the rest of [0, τ] is stepped again.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, PhiAction, PhiOptions, PhiStats } from "./types.js";
import { createExpmWorkspace, expm } from "./dense.js";
import { inverseFactorial, phiComplexAll } from "./scalarPhi.js";
import { symmetricTridiagonalEigen } from "./tridiagonalEigen.js";
import { axpy, dot, highestNonZero, isZero } from "./vector.js";

export interface KrylovOptions extends PhiOptions {
  /** Largest basis size before a time sub-step is forced (memory: (maxDim+1)·n numbers). Default 100. */
  maxDim?: number;
  /** Testing aid: build exactly this many vectors, take one step over τ and report the estimate. */
  fixedDim?: number;
  /** Skew mode only: second orthogonalization pass against all previous vectors (default: last two). */
  fullReorthogonalization?: boolean;
}

/** Safety factor between the error estimate and the tolerance. */
const SAFETY = 0.5;
/** Relative size of h_{m+1,m} below which the Krylov space is taken as invariant. */
const BREAKDOWN = 1e-12;
/** Relative deviation of H from skew symmetry that makes the backend fall back to full Arnoldi. */
const SKEW_DEFECT = 1e-7;

export interface KrylovPhiAction extends PhiAction {
  /** "lanczos" (skew, incomplete orthogonalization) or "arnoldi" (full; also after a failed skew check). */
  readonly mode: "lanczos" | "arnoldi";
}

export function krylovPhi(op: LinearOperator, opts: KrylovOptions): KrylovPhiAction {
  const n = op.n;
  const P = opts.maxPhi;
  const tol = opts.tol;
  const mMax = Math.max(1, Math.min(opts.fixedDim ?? opts.maxDim ?? opts.maxKrylovDim ?? 100, n));
  const weights = op.weights;
  let skewMode = op.weights !== undefined || op.skew === true;
  const fullReorth = opts.fullReorthogonalization ?? false;

  // n-sized work, allocated once
  const basisStore = new Float64Array((mMax + 1) * n);
  const V: Float64Array[] = [];
  for (let j = 0; j <= mMax; j++) V.push(basisStore.subarray(j * n, (j + 1) * n));
  const W: Float64Array[] = [];
  for (let j = 0; j <= P; j++) W.push(new Float64Array(n));
  const wZero = new Uint8Array(P + 1);
  const F: Float64Array[] = []; // polynomial forcing re-expanded about the current sub-step start
  for (let j = 0; j <= P; j++) F.push(j === 0 ? new Float64Array(0) : new Float64Array(n));

  // small work
  const hess = new Float64Array((mMax + 1) * mMax); // general mode: H[i*mMax + j]
  const beta = new Float64Array(mMax + 1); // skew mode: beta[j] = H_{j+1,j} (0-based j)
  const eigD = new Float64Array(mMax), eigE = new Float64Array(mMax);
  const eigZ = new Float64Array(mMax * mMax);
  const augN = mMax + P + 2;
  const aug = new Float64Array(augN * augN), expAug = new Float64Array(augN * augN);
  const expmWs = createExpmWorkspace(augN);
  const Y = new Float64Array((P + 2) * mMax); // Y[k*mMax + r] = (φ_k(hH) e_1)_r, k = 0..p+1
  const cr = new Float64Array(P + 2), ci = new Float64Array(P + 2);
  const fRe = new Float64Array((P + 2) * mMax), fIm = new Float64Array((P + 2) * mMax); // φ_k(−ihλ_l) q_l
  const gram = new Float64Array(P * P); // <w_i, w_j>, i,j < p
  const cross = new Float64Array(P * (mMax + 1)); // <w_i, V_r>
  const polyCoef = new Float64Array(P + 1);

  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 0, errorEstimate: NaN, happyBreakdown: false };
  let innerProducts = 0;
  const ip = (a: Float64Array, b: Float64Array) => { innerProducts++; return dot(a, b, weights); };

  // state of the current sub-step
  let m = 0; // basis vectors in use
  let p = 0;
  let betaW = 0; // ‖w_p‖
  let hLast = 0; // h_{m+1,m}
  let eigRows = 0; // rows of Q held in eigZ (2 or m)
  let breakdown = false;

  /**
   * One Arnoldi/Lanczos step: column j = m of H and V[m+1] ← A V[m] orthogonalized; afterwards m vectors
   * V[0..m−1] and the m×m block of H form the approximation, h_{m+1,m} = hLast. Returns false when the
   * skew promise is broken (the caller restarts in full-Arnoldi mode).
   */
  function extend(): boolean {
    const j = m;
    const w = V[j + 1];
    op.apply(w, V[j]);
    const nu = Math.sqrt(ip(w, w));
    if (skewMode) {
      let alpha = 0, gamma = 0;
      for (let pass = 0; pass < 2; pass++) {
        const c1 = ip(w, V[j]);
        axpy(-c1, V[j], w);
        alpha += c1;
        if (j > 0) {
          const c0 = ip(w, V[j - 1]);
          axpy(-c0, V[j - 1], w);
          gamma += c0;
        }
        if (pass === 1 && fullReorth) {
          for (let i = 0; i < j - 1; i++) axpy(-ip(w, V[i]), V[i], w);
        }
      }
      const prev = j > 0 ? beta[j - 1] : 0;
      if (Math.abs(alpha) + Math.abs(gamma + prev) > SKEW_DEFECT * Math.max(nu, 1e-300)) {
        skewMode = false;
        return false;
      }
      const b = Math.sqrt(ip(w, w));
      beta[j] = b;
      hLast = b;
    } else {
      for (let i = 0; i <= j; i++) hess[i * mMax + j] = 0;
      for (let pass = 0; pass < 2; pass++) {
        for (let i = 0; i <= j; i++) {
          const c = ip(w, V[i]);
          axpy(-c, V[i], w);
          hess[i * mMax + j] += c;
        }
      }
      const b = Math.sqrt(ip(w, w));
      hess[(j + 1) * mMax + j] = b;
      hLast = b;
    }
    for (let i = 0; i < p; i++) if (!wZero[i]) cross[i * (mMax + 1) + j] = ip(W[i], V[j]);
    if (hLast <= BREAKDOWN * Math.max(nu, 1e-300) || hLast === 0) {
      breakdown = true;
    } else {
      const s = 1 / hLast;
      for (let i = 0; i < n; i++) w[i] *= s;
    }
    m = j + 1;
    return true;
  }

  /** Skew mode: eigen-decomposition of S (off-diagonals beta[0..m−2]) tracking rows {0, m−1} or all rows. */
  function decompose(allRows: boolean): void {
    eigD.fill(0, 0, m);
    for (let i = 0; i + 1 < m; i++) eigE[i] = beta[i];
    const r = allRows ? m : Math.min(2, m);
    eigZ.fill(0, 0, r * m);
    if (allRows) for (let i = 0; i < m; i++) eigZ[i * m + i] = 1;
    else { eigZ[0] = 1; if (m > 1) eigZ[m + m - 1] = 1; }
    symmetricTridiagonalEigen(eigD, eigE, m, eigZ, r);
    eigRows = r;
  }

  /**
   * Fill Y[k] = φ_k(hH) e_1 for k = kLo..p+1 on the rows held (skew: rows 0 and m−1 unless all rows
   * were decomposed; general: all rows from one augmented exponential).
   */
  function smallFunctions(h: number, kLo: number): void {
    if (skewMode) {
      // y_r = Re(i^r Σ_l Q_{r,l} q_l φ_k(−i h λ_l)), q_l = Q_{0,l}
      for (let l = 0; l < m; l++) {
        phiComplexAll(cr, ci, p + 1, 0, -h * eigD[l]);
        const q = eigZ[l];
        for (let k = kLo; k <= p + 1; k++) { fRe[k * mMax + l] = q * cr[k]; fIm[k * mMax + l] = q * ci[k]; }
      }
      const rows = eigRows;
      for (let k = kLo; k <= p + 1; k++) {
        for (let t = 0; t < rows; t++) {
          const r = rows === m ? t : t === 0 ? 0 : m - 1;
          let sr = 0, si = 0;
          const zo = t * m;
          for (let l = 0; l < m; l++) { sr += eigZ[zo + l] * fRe[k * mMax + l]; si += eigZ[zo + l] * fIm[k * mMax + l]; }
          let val: number;
          if ((r & 1) === 0) val = (r & 2) === 0 ? sr : -sr;
          else val = (r & 2) === 0 ? -si : si;
          Y[k * mMax + r] = val;
        }
      }
    } else {
      // exp([[hH, e_1, 0], [0, J]]) of size m + p + 1: column 0 → φ_0 e_1, column m+k−1 → φ_k e_1
      const N = m + p + 1;
      aug.fill(0, 0, N * N);
      for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) aug[i * N + j] = h * hess[i * mMax + j];
      aug[m] = 1;
      for (let c = 0; c + 1 < p + 1; c++) aug[(m + c) * N + m + c + 1] = 1;
      expm(expAug, aug, N, expmWs);
      for (let r = 0; r < m; r++) {
        Y[r] = expAug[r * N];
        for (let k = 1; k <= p + 1; k++) Y[k * mMax + r] = expAug[r * N + m + k - 1];
      }
    }
  }

  /** Norm of the sum of the Krylov part squared magnitude: ‖y‖² for y = h^p φ_p(hH) e_1 (all rows needed unless skew). */
  function yNormSquared(h: number): number {
    const hp = Math.pow(h, p);
    let s = 0;
    if (skewMode) {
      // ‖D Q f(Λ) q‖ = ‖f(Λ) q‖
      for (let l = 0; l < m; l++) { const a = fRe[p * mMax + l], b = fIm[p * mMax + l]; s += a * a + b * b; }
    } else {
      for (let r = 0; r < m; r++) s += Y[p * mMax + r] * Y[p * mMax + r];
    }
    return hp * hp * s;
  }

  // ‖Σ_{i<p} h^i/i! w_i‖² and whether that polynomial part is present (set by polynomialNorms)
  let polyPP = 0, polyHas = false;
  function polynomialNorms(h: number): void {
    polyHas = false;
    for (let i = 0; i < p; i++) {
      polyCoef[i] = wZero[i] ? 0 : Math.pow(h, i) * inverseFactorial(i);
      if (!wZero[i]) polyHas = true;
    }
    let pp = 0;
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) pp += polyCoef[i] * polyCoef[j] * gram[i * P + j];
    polyPP = Math.max(pp, 0);
  }
  // reused result holder to avoid allocation
  const evalResult = { err: 0, scale: 0 };

  /** Error estimate and ‖u(t+h)‖ for step h with the current basis; needs smallFunctions(h, p) first. */
  function evaluate(h: number, needExact: boolean): typeof evalResult {
    const rowLast = m - 1;
    const phiNext = Y[(p + 1) * mMax + rowLast];
    evalResult.err = breakdown ? 0 : betaW * hLast * Math.pow(h, p + 1) * Math.abs(phiNext);
    const ky = betaW * Math.sqrt(yNormSquared(h));
    polynomialNorms(h);
    const pp = polyPP;
    if (!polyHas) { evalResult.scale = ky; return evalResult; }
    if (!needExact) { evalResult.scale = Math.sqrt(pp) + ky; return evalResult; }
    // exact: ‖P‖² + 2β Σ_r y_r <P, V_r> + β² ‖y‖²  (needs all rows of y)
    const hp = Math.pow(h, p);
    let c = 0;
    for (let r = 0; r < m; r++) {
      let pv = 0;
      for (let i = 0; i < p; i++) if (polyCoef[i] !== 0) pv += polyCoef[i] * cross[i * (mMax + 1) + r];
      c += hp * Y[p * mMax + r] * pv;
    }
    evalResult.scale = Math.sqrt(Math.max(0, pp + 2 * betaW * c + ky * ky));
    return evalResult;
  }

  /** Accept-test for step h: returns the estimate if accepted, −1 otherwise. */
  function tryStep(h: number, tau: number): number {
    const allowedPerScale = SAFETY * tol * (h / tau);
    polynomialNorms(h);
    if (skewMode && polyHas && eigRows !== m) {
      smallFunctions(h, p);
      const upper = evaluate(h, false);
      if (upper.err > allowedPerScale * upper.scale) return -1;
      decompose(true);
    }
    smallFunctions(h, p);
    const ev = evaluate(h, true);
    return ev.err <= allowedPerScale * ev.scale ? ev.err : -1;
  }

  // when to test next: every max(1, m/40) vectors, sooner when a linear extrapolation of
  // log(estimate/allowed) from the last two tests says the tolerance is close (half of that distance)
  let nextCheck = 0, lastCheckM = 0, lastCheckLog = 0;
  function scheduleCheck(tau: number): void {
    const ratio = Math.log(Math.max(evalResult.err, 1e-300) / Math.max(SAFETY * tol * evalResult.scale, 1e-300));
    let gap = Math.max(1, Math.floor(m / 40));
    if (lastCheckM > 0 && ratio < lastCheckLog) {
      const slope = (ratio - lastCheckLog) / (m - lastCheckM);
      gap = Math.max(1, Math.min(gap, Math.floor((0.5 * -ratio) / slope)));
    }
    void tau;
    lastCheckM = m; lastCheckLog = ratio;
    nextCheck = m + gap;
  }

  /** Gershgorin-type bound of the spectral radius of the current H (for deciding when to test). */
  function ritzBound(): number {
    let g = 0;
    if (skewMode) for (let i = 0; i < m; i++) g = Math.max(g, (i > 0 ? beta[i - 1] : 0) + (i + 1 < m ? beta[i] : 0));
    else for (let i = 0; i < m; i++) { let s = 0; for (let j = 0; j < m; j++) s += Math.abs(hess[i * mMax + j]); g = Math.max(g, s); }
    return g;
  }

  /**
   * target = u^{(j)}(t+h) = Σ_{l<p−j} h^l/l! w_{j+l} + β V (h^{p−j} φ_{p−j}(hH) e_1). Reads only W[j..p−1]
   * (and V), so the derivatives can be overwritten in place in ascending j.
   */
  function combine(target: Float64Array, j: number, h: number): void {
    const k = p - j, hk = Math.pow(h, k);
    if (k === 0 || wZero[j]) target.fill(0);
    else if (target !== W[j]) target.set(W[j]);
    for (let l = 1; l < k; l++) if (!wZero[j + l]) axpy(Math.pow(h, l) * inverseFactorial(l), W[j + l], target);
    for (let r = 0; r < m; r++) axpy(betaW * hk * Y[k * mMax + r], V[r], target);
  }

  /** w_j = A w_{j−1} + f_j, j = 1..p, from w_0 already in W[0] (a matvec is skipped when w_{j−1} = 0). */
  function derivatives(f: readonly Float64Array[]): void {
    wZero[0] = isZero(W[0]) ? 1 : 0;
    for (let j = 1; j <= p; j++) {
      if (wZero[j - 1]) W[j].set(f[j]);
      else { op.apply(W[j], W[j - 1]); axpy(1, f[j], W[j]); }
      wZero[j] = isZero(W[j]) ? 1 : 0;
    }
  }

  /** target = u(t + r) when no φ part is left: Σ_{l<p} r^l/l! w_l (exact). */
  function polynomial(target: Float64Array, r: number): void {
    target.fill(0);
    for (let l = 0; l < p; l++) if (!wZero[l]) axpy(Math.pow(r, l) * inverseFactorial(l), W[l], target);
    if (p === 0 && !wZero[0]) target.set(W[0]);
  }

  // the times of one call in ascending order, and those whose check failed with the shared basis
  let order = new Int32Array(4);
  let retry = new Uint8Array(4);
  const oneOut: Float64Array[] = [new Float64Array(0)];
  const oneTau: number[] = [0];

  /**
   * outs[i] = u(τ_i) for every τ_i, from one sequence of sub-steps over [0, max τ]: a time inside a sub-step
   * [t, t+h] is read from that sub-step's basis, u(τ_i) = Σ_{l<p} s^l/l! w_l + β V s^p φ_p(sH) e_1 with
   * s = τ_i − t, if the estimate at s passes the sub-step test scaled to τ_i (err ≤ ½ tol (s/τ_i) ‖u(τ_i)‖);
   * otherwise that time is computed again on its own afterwards.
   */
  function run(outs: readonly Float64Array[], taus: readonly number[], v: readonly Float64Array[]): void {
    const nT = taus.length;
    if (nT === 0) return;
    if (order.length < nT) { order = new Int32Array(nT); retry = new Uint8Array(nT); }
    for (let i = 0; i < nT; i++) {
      if (nT > 1 && !(Number.isFinite(taus[i]) && taus[i] >= 0)) throw new SolverError("bad-input", `krylov: time ${taus[i]} must be finite and ≥ 0`, "phi.apply");
      let q = i;
      while (q > 0 && taus[order[q - 1]] > taus[i]) { order[q] = order[q - 1]; q--; }
      order[q] = i;
      retry[i] = 0;
    }
    const tau = taus[order[nT - 1]];
    const top = highestNonZero(v);
    if (top < 0) { for (let i = 0; i < nT; i++) outs[i].fill(0); stats.errorEstimate = 0; return; }
    if (top > P) throw new SolverError("bad-input", `krylov: phi index ${top} exceeds maxPhi ${P}`, "phi.apply");
    p = top;
    W[0].set(v[0]);
    derivatives(v);
    let forcingIsInput = true;
    let t = 0, errSum = 0, lastScale = 0, errMax = 0, next = 0;
    while (true) {
      const rem = tau - t;
      if (wZero[p] || rem === 0) {
        // no φ part left: the polynomial is exact
        for (; next < nT; next++) polynomial(outs[order[next]], taus[order[next]] - t);
        break;
      }
      for (let i = 0; i < p; i++) for (let j = 0; j <= i; j++) {
        const g = wZero[i] || wZero[j] ? 0 : ip(W[i], W[j]);
        gram[i * P + j] = g; gram[j * P + i] = g;
      }
      betaW = Math.sqrt(ip(W[p], W[p]));
      const s = 1 / betaW;
      for (let i = 0; i < n; i++) V[0][i] = W[p][i] * s;
      m = 0; breakdown = false; eigRows = 0;
      nextCheck = 0; lastCheckM = 0; lastCheckLog = 0;
      let h = -1, err = 0;
      let restarted = false;
      while (true) {
        if (!extend()) { restarted = true; break; }
        const atLimit = m >= mMax;
        if (opts.fixedDim !== undefined) {
          if (!atLimit && !breakdown) continue;
          h = rem;
          if (skewMode) decompose(true);
          smallFunctions(h, 0);
          err = evaluate(h, true).err;
          break;
        }
        if (breakdown || atLimit || (m >= nextCheck && (m >= 0.5 * rem * ritzBound() || m < 4))) {
          if (skewMode) decompose(breakdown || atLimit);
          const e = tryStep(rem, tau);
          if (e >= 0 || breakdown) { h = rem; err = Math.max(e, 0); break; }
          scheduleCheck(tau);
          if (atLimit) {
            if (skewMode && eigRows !== m) decompose(true);
            h = searchStep(rem, tau);
            err = Math.max(tryStep(h, tau), 0);
            break;
          }
        }
      }
      if (restarted) continue; // fell back to full Arnoldi: redo this sub-step
      if (skewMode && eigRows !== m) decompose(true);
      // earlier times that fall inside this sub-step, from the same basis
      for (; next < nT && taus[order[next]] - t < h; next++) {
        const i = order[next], si = taus[i] - t;
        if (si <= 0) { polynomial(outs[i], 0); continue; }
        smallFunctions(si, 0);
        const ev = evaluate(si, true);
        if (breakdown || opts.fixedDim !== undefined || ev.err <= SAFETY * tol * (si / taus[i]) * ev.scale) {
          combine(outs[i], 0, si);
          if (ev.scale > 0) errMax = Math.max(errMax, (errSum + ev.err) / ev.scale);
        } else retry[i] = 1;
      }
      smallFunctions(h, 0);
      lastScale = evaluate(h, true).scale;
      errSum += err;
      stats.substeps++;
      if (breakdown) stats.happyBreakdown = true;
      if (h >= rem) {
        // the times left all equal the largest
        const first = outs[order[next]];
        combine(first, 0, h);
        for (next++; next < nT; next++) outs[order[next]].set(first);
        break;
      }
      // restart at t+h: u(t+h) from the basis, forcing re-expanded about t+h (exact), then
      // w_j = A w_{j−1} + f_j again. (Taking the derivatives w_j from the basis as well would save these p
      // matvecs, but their Krylov errors are amplified by (τ−t)^j/j! in the result.)
      combine(W[0], 0, h);
      for (let k = 1; k <= p; k++) {
        if (forcingIsInput) F[k].set(v[k]);
        for (let l = k + 1; l <= p; l++) axpy(Math.pow(h, l - k) * inverseFactorial(l - k), forcingIsInput ? v[l] : F[l], F[k]);
      }
      forcingIsInput = false;
      derivatives(F);
      t += h;
    }
    stats.errorEstimate = Math.max(errMax, lastScale > 0 ? errSum / lastScale : 0);
    if (nT === 1) return;
    // times the shared basis could not give to the tolerance: on their own (rare; the one-time call only
    // touches order[0] and retry[0], which this ascending loop has passed)
    for (let i = 0; i < nT; i++) {
      if (!retry[i]) continue;
      const est = stats.errorEstimate;
      oneOut[0] = outs[i]; oneTau[0] = taus[i];
      run(oneOut, oneTau, v);
      stats.errorEstimate = Math.max(est, stats.errorEstimate);
    }
  }

  /** Largest h ≤ rem passing the accept-test with the basis at hand (bisection). */
  function searchStep(rem: number, tau: number): number {
    let lo = 0, hi = rem;
    let guess = rem * 0.5;
    for (let it = 0; it < (skewMode ? 40 : 12); it++) {
      if (tryStep(guess, tau) >= 0) lo = guess; else hi = guess;
      guess = 0.5 * (lo + hi);
      if (hi - lo <= 1e-3 * hi) break;
    }
    return lo > 0 ? lo : hi;
  }

  function measured(outs: readonly Float64Array[], taus: readonly number[], v: readonly Float64Array[]): void {
    const mv0 = op.counters.matvecs;
    innerProducts = 0;
    stats.substeps = 0; stats.happyBreakdown = false; stats.errorEstimate = NaN;
    run(outs, taus, v);
    stats.matvecs = op.counters.matvecs - mv0;
    stats.innerProducts = innerProducts;
    op.counters.innerProducts += innerProducts;
  }

  return {
    name: "krylov",
    stats,
    get mode() { return skewMode ? "lanczos" as const : "arnoldi" as const; },
    apply(out, tau, v) {
      oneOut[0] = out; oneTau[0] = tau;
      measured(oneOut, oneTau, v);
    },
    applyTimes(outs, taus, v) {
      if (outs.length < taus.length) throw new SolverError("bad-input", `krylov: ${taus.length} times but ${outs.length} outputs`, "phi.applyTimes");
      measured(outs, taus, v);
    },
  };
}
