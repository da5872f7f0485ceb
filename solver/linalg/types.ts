/**
 * Generic linear operators and matrix-function actions (Hochbruck & Ostermann 2010, Acta Numerica 19).
 * Everything here is matrix-free and allocation-free per call: factories allocate their work arrays once.
 */

/** Counters that every operator keeps; the steppers and the CLI report them. */
export interface OperatorCounters {
  /** Operator applications (matrix-vector products) since creation. */
  matvecs: number;
  /** Global inner products (reductions over the whole vector) since creation. */
  innerProducts: number;
}

export interface LinearOperator {
  /** Length of the vectors it acts on. */
  readonly n: number;
  /** out = A x. Must not allocate. `out` and `x` never alias. */
  apply(out: Float64Array, x: Float64Array): void;
  /**
   * Optional diagonal weights w of an inner product <a,b> = Σ w_j a_j b_j in which A is skew-adjoint
   * (the linear-energy inner product of the wave operator). Krylov then builds a skew tridiagonal H.
   */
  readonly weights?: Float64Array;
  /** Upper bound of the spectral radius (|λ| ≤ spectralBound) [1/s]; needed by Chebyshev. */
  readonly spectralBound?: number;
  /** True when the spectrum is known to lie on the imaginary axis (Chebyshev and rational backends need it). */
  readonly skew?: boolean;
  readonly counters: OperatorCounters;
  /**
   * y = (I − γA)⁻¹ c for any real γ (y and c may alias), when the operator offers shifted solves (a sparse
   * factorization per γ, computed once). Used by the rational-damped backend.
   */
  shiftedSolve?(y: Float64Array, c: Float64Array, gamma: number): void;
  /**
   * Complex shifted solves x = (σI − A)⁻¹ r, one sparse factorization per σ, cached, when the operator offers them.
   * `reserve(count)` refuses (one line naming the field) when `count` factorizations would not fit the memory or
   * work bound. Used by the rational backend.
   */
  complexShiftedSolver?(): ComplexShifts;
}

/** See LinearOperator.complexShiftedSolver. */
export interface ComplexShifts {
  reserve(count: number, what?: string): void;
  /** x = (σI − A)⁻¹ r with σ = sr + i·si (real and imaginary parts apart); x may alias r. */
  solve(xRe: Float64Array, xIm: Float64Array, rRe: Float64Array, rIm: Float64Array, sr: number, si: number): void;
}

export interface PhiStats {
  /** Operator applications used by the last call. */
  matvecs: number;
  /** Global inner products used by the last call. */
  innerProducts: number;
  /** Time sub-steps taken by the last call. */
  substeps: number;
  /** A-posteriori error estimate of the last call (relative), NaN if the backend has none. */
  errorEstimate: number;
  /** Krylov space became invariant (the result is exact in it). */
  happyBreakdown: boolean;
}

/**
 * out = Σ_{k=0}^{p} τ^k φ_k(τ A) v[k], with φ_0 = exp (Al-Mohy & Higham 2011).
 * Steppers call it in increment form (v[0] = 0, tendencies in v[1..]), so mass stays exact.
 * `out` must not alias any v[k].
 */
export interface PhiAction {
  readonly name: string;
  readonly stats: PhiStats;
  apply(out: Float64Array, tau: number, v: readonly Float64Array[]): void;
  /**
   * outs[i] = Σ_{k=0}^{p} τ_i^k φ_k(τ_i A) v[k] for every τ_i of `taus` (one vector set, several times, in
   * any order; outs[i] must not alias any v[k] or each other). Backends that can build one basis for all
   * times implement it (krylov: one Krylov space, the error estimate checked per τ; chebyshev: the
   * Chebyshev vectors shared, coefficients per τ); `applyAtTimes` (phiTimes.ts) falls back to one `apply`
   * per τ for the others. The problem counts one call as one φ-action. `stats` then describe the whole call
   * (errorEstimate: the largest over the times).
   */
  applyTimes?(outs: readonly Float64Array[], taus: readonly number[], v: readonly Float64Array[]): void;
}

/** Optional damping of the highest resolved frequencies (an exponential filter; common practice, no source); off by default. */
export interface PhiFilter {
  /** Cut-off angular frequency ω_c [1/s]; frequencies above it are damped. */
  cutoff: number;
  /** Exponent 2p of σ(iω) = exp(−κ (|ω|/ω_c)^{2p}). */
  order: number;
  /** κ; 36 puts σ at machine precision at ω_c. */
  strength: number;
}

export type PhiBackendName = "krylov" | "taylor" | "chebyshev" | "substep" | "rational" | "rational-damped" | "dense";

export interface PhiOptions {
  /** Relative tolerance of the action. */
  tol: number;
  /** Highest φ index the caller will pass (length of v minus one). */
  maxPhi: number;
  /** Sub-steps of the substep backend (0 = choose from the spectral bound). */
  substeps?: number;
  filter?: PhiFilter;
  /** Largest Krylov basis (memory (maxKrylovDim+1)·n numbers) before the krylov backend sub-steps; default 100. */
  maxKrylovDim?: number;
  /** Field prefix of error messages, e.g. "stepper" (default "phi"). */
  field?: string;
}
