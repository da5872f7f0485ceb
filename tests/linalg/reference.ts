/**
 * Independent references for the φ tests: mathjs's `expm` (its own Padé implementation) applied to the
 * augmented matrix of Al-Mohy & Higham (2011, Theorem 2.1), assembled here without the project's code:
 *   exp([[τA, W], [0, J]]) [v_0; e_p] = Σ_k τ^k φ_k(τA) v_k,  W = [τ^p v_p, …, τ v_1],  J = upper shift.
 * mathjs's expm gives up on large norms, so e^M = (e^{M/2^s})^{2^s} (exact identity) with mathjs doing
 * both the exponential of M/2^s and the squarings.
 */
import { expm, matrix, multiply } from "mathjs";

export function mathjsPhiCombination(a: Float64Array, n: number, tau: number, v: readonly Float64Array[], pre?: number[][]): Float64Array {
  const p = v.length - 1;
  const N = n + p;
  const m: number[][] = Array.from({ length: N }, () => new Array<number>(N).fill(0));
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m[i][j] = tau * a[i * n + j];
  // W scaled by η = 1/max‖τ^k v_k‖_∞ and e_p by 1/η (an exact rescaling of the auxiliary block)
  let wmax = 0;
  for (let k = 1; k <= p; k++) for (let i = 0; i < n; i++) wmax = Math.max(wmax, Math.abs(Math.pow(tau, k) * v[k][i]));
  const eta = wmax > 0 ? 1 / wmax : 1;
  for (let c = 0; c < p; c++) {
    const k = p - c;
    for (let i = 0; i < n; i++) m[i][n + c] = eta * Math.pow(tau, k) * v[k][i];
  }
  for (let c = 0; c + 1 < p; c++) m[n + c][n + c + 1] = 1;
  const e = expmBySquaring(m);
  const b = new Array<number>(N).fill(0);
  for (let i = 0; i < n; i++) b[i] = v[0][i];
  if (p > 0) b[N - 1] = 1 / eta;
  let res = multiply(e, b) as number[];
  if (pre) res = multiply(pre, res.slice(0, n)) as number[];
  return Float64Array.from(res.slice(0, n));
}

function expmBySquaring(m: number[][]): number[][] {
  let norm = 0;
  for (let j = 0; j < m.length; j++) { let c = 0; for (let i = 0; i < m.length; i++) c += Math.abs(m[i][j]); norm = Math.max(norm, c); }
  const s = Math.max(0, Math.ceil(Math.log2(norm / 4)));
  const f = Math.pow(2, -s);
  let e = (expm(matrix(m.map((row) => row.map((x) => x * f)))) as unknown as { toArray(): number[][] }).toArray();
  for (let k = 0; k < s; k++) e = multiply(e, e) as number[][];
  return e;
}

export function mathjsExpm(a: Float64Array, n: number): Float64Array {
  const m: number[][] = [];
  for (let i = 0; i < n; i++) m.push(Array.from(a.subarray(i * n, (i + 1) * n)));
  return Float64Array.from((expm(matrix(m)) as unknown as { toArray(): number[][] }).toArray().flat());
}

export function weightedNorm(x: Float64Array, w?: Float64Array): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += (w ? w[i] : 1) * x[i] * x[i];
  return Math.sqrt(s);
}

export function relativeError(x: Float64Array, ref: Float64Array, w?: Float64Array): number {
  const d = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) d[i] = x[i] - ref[i];
  return weightedNorm(d, w) / weightedNorm(ref, w);
}
