/**
 * Multi-time φ-actions: one vector set v evaluated at several times τ_i (Saad 1992, SIAM J. Numer. Anal. 29,
 * 209–228: the Krylov space K_m(A, v) does not depend on τ; Tal-Ezer & Kosloff 1984: the Chebyshev vectors
 * do not either). `applyAtTimes` uses the backend's shared evaluation when it has one, else one `apply` per τ.
 */
import type { PhiAction } from "./types.js";

/** outs[i] = Σ_k τ_i^k φ_k(τ_i A) v[k] for every τ_i of taus. */
export function applyAtTimes(phi: PhiAction, outs: readonly Float64Array[], taus: readonly number[], v: readonly Float64Array[]): void {
  if (phi.applyTimes) phi.applyTimes(outs, taus, v);
  else for (let i = 0; i < taus.length; i++) phi.apply(outs[i], taus[i], v);
}

/**
 * Grow a list of work vectors of length n to at least `count` entries (new vectors only when more times are
 * asked for than ever before: a step asks for the same number every time, so this allocates once).
 */
export function growVectors(list: Float64Array[], count: number, n: number): Float64Array[] {
  while (list.length < count) list.push(new Float64Array(n));
  return list;
}
