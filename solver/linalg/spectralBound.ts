/**
 * Spectral-radius estimate for an operator without an analytic bound (Tal-Ezer & Kosloff 1984):
 * power iteration on −A², which for A skew-adjoint in the weighted inner product is A*A, positive
 * semi-definite with largest eigenvalue ρ². Each iterate gives the lower bound ‖A x‖/‖x‖ ≤ ρ; the
 * returned bound adds a safety margin (an underestimate makes Chebyshev diverge). For an operator that
 * is not normal the same quantity estimates ‖A‖ only roughly.
 */
import type { LinearOperator } from "./types.js";
import { dot } from "./vector.js";

export interface SpectralBoundEstimate {
  /** estimate·(1 + margin) [1/s] */
  bound: number;
  /** last Rayleigh-quotient value ‖A x‖/‖x‖ [1/s] */
  estimate: number;
  iterations: number;
  matvecs: number;
  innerProducts: number;
}

export interface SpectralBoundOptions {
  maxIterations?: number;
  /** Stop when successive estimates differ by less than this (relative). */
  tol?: number;
  /** Relative safety margin added to the estimate; default 0.05. */
  margin?: number;
  seed?: number;
}

export function estimateSpectralBound(op: LinearOperator, o: SpectralBoundOptions = {}): SpectralBoundEstimate {
  const maxIt = o.maxIterations ?? 200, tol = o.tol ?? 1e-8, margin = o.margin ?? 0.05;
  const n = op.n, w = op.weights;
  const x = new Float64Array(n), y = new Float64Array(n);
  // deterministic pseudo-random start (Park & Miller 1988 minimal standard generator)
  let s = (o.seed ?? 12345) % 2147483647 || 1;
  for (let i = 0; i < n; i++) { s = (s * 16807) % 2147483647; x[i] = s / 2147483647 - 0.5; }
  const mv0 = op.counters.matvecs;
  let ips = 0;
  let nx = Math.sqrt(dot(x, x, w)); ips++;
  for (let i = 0; i < n; i++) x[i] /= nx;
  let est = 0, it = 0;
  for (it = 1; it <= maxIt; it++) {
    op.apply(y, x); // y = A x
    const ny = Math.sqrt(dot(y, y, w)); ips++;
    const prev = est;
    est = ny; // ‖x‖ = 1
    if (ny === 0) break;
    op.apply(x, y); // x = A² x (sign irrelevant for the normalised iterate)
    nx = Math.sqrt(dot(x, x, w)); ips++;
    if (nx === 0) break;
    for (let i = 0; i < n; i++) x[i] /= nx;
    if (it > 3 && Math.abs(est - prev) <= tol * est) break;
  }
  op.counters.innerProducts += ips;
  return { bound: est * (1 + margin), estimate: est, iterations: Math.min(it, maxIt), matvecs: op.counters.matvecs - mv0, innerProducts: ips };
}
