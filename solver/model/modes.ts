/**
 * Vertical modes of the layer stack (Gill 1982, §6.2): eigenpairs of G H with
 * G_kj = Σ_{l ≤ min(k,j)} g'_l and H = diag(H_k). Solved in the symmetric form H^{1/2} G H^{1/2}.
 */

export interface VerticalModes {
  /** Modal gravity-wave speeds c_m [m/s], fastest (barotropic) first. */
  readonly speeds: number[];
  /** Rossby radii c_m/|f0| [m] (Infinity when f0 = 0). */
  readonly rossbyRadii: number[];
  /** Velocity structures S (column m = mode m), normalised S^T H S = H_tot I; row-major L×L. */
  readonly structure: Float64Array;
  /** The layer-coupling matrix G (row-major L×L) [m/s²]. */
  readonly coupling: Float64Array;
  readonly thickness: readonly number[];
}

/** Cyclic Jacobi eigen-solver for a small symmetric matrix (row-major); returns eigenvalues and column eigenvectors. */
export function symmetricEigen(a: Float64Array, n: number): { values: Float64Array; vectors: Float64Array } {
  const A = Float64Array.from(a);
  const V = new Float64Array(n * n);
  for (let i = 0; i < n; i++) V[i * n + i] = 1;
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off += A[p * n + q] ** 2;
    if (off < 1e-30 * (1 + A.reduce((s, x) => s + x * x, 0))) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = A[p * n + q];
        if (Math.abs(apq) < 1e-300) continue;
        const theta = (A[q * n + q] - A[p * n + p]) / (2 * apq);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = A[k * n + p];
          const akq = A[k * n + q];
          A[k * n + p] = c * akp - s * akq;
          A[k * n + q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = A[p * n + k];
          const aqk = A[q * n + k];
          A[p * n + k] = c * apk - s * aqk;
          A[q * n + k] = s * apk + c * aqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = V[k * n + p];
          const vkq = V[k * n + q];
          V[k * n + p] = c * vkp - s * vkq;
          V[k * n + q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const values = new Float64Array(n);
  for (let i = 0; i < n; i++) values[i] = A[i * n + i];
  return { values, vectors: V };
}

export function layerCoupling(reducedGravity: ArrayLike<number>): Float64Array {
  const L = reducedGravity.length;
  const G = new Float64Array(L * L);
  for (let k = 0; k < L; k++) {
    for (let j = 0; j < L; j++) {
      let s = 0;
      for (let l = 0; l <= Math.min(k, j); l++) s += reducedGravity[l];
      G[k * L + j] = s;
    }
  }
  return G;
}

export function verticalModes(reducedGravity: ArrayLike<number>, thickness: readonly number[], f0: number): VerticalModes {
  const L = thickness.length;
  const G = layerCoupling(reducedGravity);
  const sq = thickness.map(Math.sqrt);
  const B = new Float64Array(L * L);
  for (let k = 0; k < L; k++) for (let j = 0; j < L; j++) B[k * L + j] = sq[k] * G[k * L + j] * sq[j];
  const { values, vectors } = symmetricEigen(B, L);
  const order = Array.from({ length: L }, (_, i) => i).sort((a, b) => values[b] - values[a]);
  const Htot = thickness.reduce((a, b) => a + b, 0);
  const S = new Float64Array(L * L);
  order.forEach((col, m) => {
    // eigenvector of G H is H^{-1/2} y; normalise y^T y = H_tot, sign: positive sum (barotropic ≈ all ones)
    let sum = 0;
    for (let k = 0; k < L; k++) sum += vectors[k * L + col] / sq[k];
    const sign = sum < 0 ? -1 : 1;
    for (let k = 0; k < L; k++) S[k * L + m] = (sign * Math.sqrt(Htot) * vectors[k * L + col]) / sq[k];
  });
  const speeds = order.map((col) => Math.sqrt(Math.max(values[col], 0)));
  const rossbyRadii = speeds.map((c) => (f0 === 0 ? Infinity : c / Math.abs(f0)));
  return { speeds, rossbyRadii, structure: S, coupling: G, thickness: [...thickness] };
}

/**
 * Barotropic gravity-wave speed of the deepest water column [m/s]: the fastest vertical mode of the layer
 * stack whose upper layers keep their nominal thickness and whose bottom layer reaches the deepest sea floor
 * (topography makes the speed vary from column to column; the deepest column sets the time-step limits).
 */
export function deepestColumnSpeed(reducedGravity: ArrayLike<number>, nominalThickness: readonly number[], bottom: ArrayLike<number>): number {
  const L = nominalThickness.length;
  let deepest = nominalThickness.reduce((a, b) => a + b, 0);
  for (let i = 0; i < bottom.length; i++) deepest = Math.max(deepest, -bottom[i]);
  const column = [...nominalThickness];
  column[L - 1] = deepest - column.slice(0, L - 1).reduce((a, b) => a + b, 0);
  return verticalModes(reducedGravity, column, 0).speeds[0];
}

/**
 * Bound of the gravity-wave frequencies of the rotating TRiSK system on the regular hexagonal mesh,
 * √(f² + 6c²/d²) (ω_max² = 6c²/d² at f = 0, Thuburn, Ringler, Skamarock & Klemp 2009, J. Comput. Phys. 228;
 * f²α + c²λ ≤ f² + 6c²/d² for any f), with a relative safety margin.
 */
export function hexSpectralBound(maxCoriolis: number, speed: number, spacing: number, margin: number): number {
  return Math.sqrt(maxCoriolis ** 2 + (6 * speed ** 2) / spacing ** 2) * (1 + margin);
}

/**
 * Largest gravity-wave frequency of TRiSK on the regular hexagonal mesh, ω_max = √6 c/d, for any f
 * (Thuburn et al. 2009): the RK4 limit is 2√2/ω_max on the imaginary axis.
 */
export function hexMaxFrequency(speed: number, spacing: number): number {
  return (Math.sqrt(6) * speed) / spacing;
}

