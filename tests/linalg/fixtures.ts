/**
 * Test fixtures for the φ backends: a seeded generator and operators whose spectrum is known by
 * construction. Nothing here is a reference value; references come from mathjs or closed forms.
 */
import { denseOperator, type DenseOperator } from "../../solver/linalg/dense";

/** Park–Miller minimal standard generator (Park & Miller 1988, CACM 31, 1192), uniform in (0, 1). */
export function seededRandom(seed: number): () => number {
  let s = seed % 2147483647;
  if (s <= 0) s += 2147483646;
  return () => {
    s = (s * 16807) % 2147483647;
    return s / 2147483647;
  };
}

/** Random orthogonal n×n matrix (row-major) by modified Gram–Schmidt on a random matrix. */
export function randomOrthogonal(n: number, rnd: () => number): Float64Array {
  const q = new Float64Array(n * n);
  for (let i = 0; i < n * n; i++) q[i] = 2 * rnd() - 1;
  // orthonormalise columns
  for (let j = 0; j < n; j++) {
    for (let pass = 0; pass < 2; pass++) {
      for (let k = 0; k < j; k++) {
        let d = 0;
        for (let i = 0; i < n; i++) d += q[i * n + j] * q[i * n + k];
        for (let i = 0; i < n; i++) q[i * n + j] -= d * q[i * n + k];
      }
    }
    let s = 0;
    for (let i = 0; i < n; i++) s += q[i * n + j] ** 2;
    s = Math.sqrt(s);
    for (let i = 0; i < n; i++) q[i * n + j] /= s;
  }
  return q;
}

export interface SkewFixture {
  op: DenseOperator;
  /** frequencies ω (eigenvalues ±iω), largest = rho */
  omegas: number[];
  rho: number;
  /** a left null vector ℓ (ℓᵀA = 0) */
  leftNull: Float64Array;
  weights: Float64Array;
}

/**
 * A = W^{-1/2} Q B Qᵀ W^{1/2} with B = blockdiag([[0, ω_i], [−ω_i, 0]], 0, …): W A is skew-symmetric,
 * so A is skew-adjoint in <a,b> = Σ w_j a_j b_j, with eigenvalues ±iω_i and `zeros` zero eigenvalues.
 */
export function weightedSkewOperator(n: number, seed: number, rho = 1, zeros = 2): SkewFixture {
  const rnd = seededRandom(seed);
  const pairs = Math.floor((n - zeros) / 2);
  const omegas: number[] = [];
  for (let i = 0; i < pairs; i++) omegas.push(i === 0 ? rho : rho * (0.02 + 0.96 * rnd()));
  const weights = new Float64Array(n);
  for (let i = 0; i < n; i++) weights[i] = 0.5 + 2 * rnd();
  const q = randomOrthogonal(n, rnd);
  const b = new Float64Array(n * n);
  for (let i = 0; i < pairs; i++) {
    b[2 * i * n + 2 * i + 1] = omegas[i];
    b[(2 * i + 1) * n + 2 * i] = -omegas[i];
  }
  // M = Q B Qᵀ
  const qb = new Float64Array(n * n), m = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) {
    const x = q[i * n + k];
    if (x !== 0) for (let j = 0; j < n; j++) qb[i * n + j] += x * b[k * n + j];
  }
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    let s = 0;
    for (let k = 0; k < n; k++) s += qb[i * n + k] * q[j * n + k];
    m[i * n + j] = s;
  }
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) a[i * n + j] = (m[i * n + j] * Math.sqrt(weights[j])) / Math.sqrt(weights[i]);
  // ℓ = W^{1/2} Q e_z for a zero block column z (Aᵀ ℓ = W^{1/2} Q Bᵀ e_z = 0)
  const z = 2 * pairs;
  const leftNull = new Float64Array(n);
  for (let i = 0; i < n; i++) leftNull[i] = Math.sqrt(weights[i]) * q[i * n + z];
  return { op: denseOperator(a, { weights, spectralBound: rho, skew: true }), omegas, rho, leftNull, weights };
}

/**
 * The 1-D periodic staggered wave operator (h at cells, u at faces, unit spacing):
 *   dh_i/dt = −H (u_{i+1/2} − u_{i−1/2}),  du_{i+1/2}/dt = −g (h_{i+1} − h_i),
 * state [h_0..h_{N−1}, u_0..u_{N−1}] (u_i at face i+1/2). Skew-adjoint in the weights (g for h, H for u);
 * frequencies 2√(gH) |sin(kπ/N)|, so ρ = 2√(gH) for even N (dispersion of the staggered grid,
 * common practice, no source).
 */
export function staggeredWave(cells: number, g = 1, depth = 1) {
  const n = 2 * cells;
  const counters = { matvecs: 0, innerProducts: 0 };
  const weights = new Float64Array(n);
  for (let i = 0; i < cells; i++) { weights[i] = g; weights[cells + i] = depth; }
  const rho = 2 * Math.sqrt(g * depth);
  return {
    n, weights, counters, spectralBound: rho, skew: true as const,
    apply(out: Float64Array, x: Float64Array) {
      for (let i = 0; i < cells; i++) {
        const um = x[cells + ((i - 1 + cells) % cells)], up = x[cells + i];
        out[i] = -depth * (up - um);
        out[cells + i] = -g * (x[(i + 1) % cells] - x[i]);
      }
      counters.matvecs++;
    },
  };
}
