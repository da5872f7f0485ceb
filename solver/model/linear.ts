/**
 * The rest-state linearization L of the multi-layer TRiSK model (Gill 1982, §6.2; Ringler et al. 2010):
 *
 *   du_{k,e}/dt = ½ Σ_{e'} W_{e,e'} (l_{e'}/d_e) Ĥ_{k,e'} u_{k,e'} (q̄_{k,e} + q̄_{k,e'}) − (G Σ_j 𝒢_kj h'_j)_e
 *   dh'_{k,i}/dt = −(D(Ĥ_k u_k))_i
 *
 * with Ĥ_{k,e} the edge mean of the resting thickness, q̄_{k,v} = f_v / H_{k,v} (kite-averaged H) the rest
 * potential vorticity and q̄_{k,e} its edge mean. This is exactly the Jacobian of the inviscid, unforced
 * tendency at rest (with topography and β); drag, viscosity and the thickness dependence of the wind
 * stress are left to the nonlinear remainder, so that L stays skew-adjoint in the linear energy
 *
 *   E₂ = ½ Σ_k Σ_e l_e d_e Ĥ_{k,e} u_{k,e}² + ½ Σ_i A_i h'_iᵀ 𝒢 h'_i .
 *
 * The thickness block A_i 𝒢 of that inner product is not diagonal. `interfaceForm` therefore offers the same
 * operator in interface-displacement variables η'_{l,i} = Σ_{j≥l} h'_{j,i} (a triangular change of variables
 * per cell, T), where the potential energy is ½ Σ_l g'_l A_i η'_l² and the weights are diagonal:
 * A_i g'_l for η'_l, l_e d_e Ĥ_{k,e} for u_k. Backends that need diagonal weights work there.
 *
 * Vectors are perturbations in the state layout of the model (h' in the thickness slots).
 */
import type { LinearOperator, OperatorCounters } from "../linalg/types.js";
import type { Mesh } from "../mesh/types.js";
import { deepestColumnSpeed, hexSpectralBound, layerCoupling } from "./modes.js";
import { estimateSpectralBound } from "../linalg/spectralBound.js";
import { wasmRestOperator } from "../kernels/restKernel.js";
import type { ShallowWaterModel, StateLayout } from "./shallowWater.js";
import { operatorShiftedSolver, type OperatorShiftedSolver, type ShiftedSolverOptions } from "./shiftedSolve.js";

export interface RestLinearOperator extends LinearOperator {
  readonly layout: StateLayout;
  /** Resting layer thickness at cells, [k·nCells + i] [m]. */
  readonly restThickness: Float64Array;
  /** Edge mean of the resting thickness Ĥ_{k,e}, [k·nEdges + e] [m]. */
  readonly edgeThickness: Float64Array;
  /** Rest PV at edges q̄_{k,e}, [k·nEdges + e] [1/(m s)]. */
  readonly restPv: Float64Array;
  /** Coefficient of u_{k,e'} in the Coriolis part of du_{k,e}/dt, aligned with the mesh's tangent CSR, per layer [1/s]. */
  readonly coriolisCoef: Float64Array;
  /** The layer-coupling matrix 𝒢 (row-major L×L) [m/s²]. */
  readonly coupling: Float64Array;
  /** Bound of the spectral radius (see RestOperatorOptions) [1/s]. */
  readonly spectralBound: number;
  /** Barotropic speed of the deepest column [m/s]. */
  readonly fastestSpeed: number;
  /** Largest |f| on the mesh [1/s]. */
  readonly maxCoriolis: number;
  /** The same operator T L T⁻¹ in interface-displacement variables, with diagonal energy weights. */
  readonly interfaceForm: LinearOperator;
  /** out = T x: thickness perturbations → interface displacements (velocities copied). */
  toInterface(out: Float64Array, x: Float64Array): void;
  /** out = T⁻¹ y. */
  fromInterface(out: Float64Array, y: Float64Array): void;
  /** Linear-energy inner product <a, b>_E (layer variables). */
  energyDot(a: Float64Array, b: Float64Array): number;
  /** Multiply-adds of one `apply` (a deterministic cost measure). */
  readonly multiplyAddsPerMatvec: number;
  /**
   * out = (I − γL)⁻¹ b (layer variables; out and b may alias): a sparse LU of I − γ·interfaceForm, computed once
   * per γ and cached (shiftedSolve.ts), then the thickness part is set to b_h + γ (L out)_h — a layer
   * divergence, so each layer's volume is that of b to round-off. Costs one product with L besides the substitutions.
   */
  solve(out: Float64Array, b: Float64Array, gamma: number): void;
  /** The sparse solver behind `solve` (built on first use; its `stats` give the cost in products with L). */
  shiftedSolver(options?: ShiftedSolverOptions): OperatorShiftedSolver;
}

export interface RestOperatorOptions {
  /**
   * How to obtain `spectralBound`: "auto" (default) uses √(f_max² + 6 c0²/d²) on a regular hexagonal mesh
   * (Thuburn et al. 2009: ω_max² = 6 c²/d² exactly at f = 0, and f²α + c²λ ≤ f² + 6c²/d² for any f) and a
   * power-iteration estimate on irregular meshes; "power" always estimates.
   */
  spectralBound?: "auto" | "power";
  /** Relative margin added to the bound (default 0.02 analytic, 0.1 estimated). */
  margin?: number;
}

/** Resting thicknesses at cells (flat interfaces, bottom layer down to the sea floor). */
export function restThickness(model: ShallowWaterModel): Float64Array {
  const x = model.restState();
  return x.slice(0, model.layout.uOffset);
}

/** True when every open edge has the lattice spacing and the lattice edge length (regular hexagons). */
export function isRegularHexMesh(m: Mesh, tol = 1e-9): boolean {
  const d = m.spacing;
  for (let e = 0; e < m.nEdges; e++) {
    if (!m.edgeOpen[e]) continue;
    if (Math.abs(m.edgeCellDistance[e] - d) > tol * d) return false;
    if (Math.abs(m.edgeLength[e] * Math.sqrt(3) - d) > tol * d) return false;
  }
  return true;
}

export function restLinearOperator(model: ShallowWaterModel, opts: RestOperatorOptions = {}): RestLinearOperator {
  const m = model.mesh;
  const p = model.params;
  const layout = model.layout;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset, n } = layout;
  const H = restThickness(model);
  const coupling = layerCoupling(p.reducedGravity);

  // Ĥ_{k,e}: mean of the two cells, the wet cell's value on a coastline edge
  const Hedge = new Float64Array(L * ne);
  for (let k = 0; k < L; k++) {
    for (let e = 0; e < ne; e++) {
      const c1 = m.edgeCells[2 * e], c2 = m.edgeCells[2 * e + 1];
      Hedge[k * ne + e] = c2 >= 0 ? 0.5 * (H[k * nc + c1] + H[k * nc + c2]) : H[k * nc + c1];
    }
  }
  // rest PV q̄_{k,v} = f_v / H_{k,v} with kite-averaged H (wet kites), and its edge mean
  const qv = new Float64Array(m.nVertices);
  const restPv = new Float64Array(L * ne);
  for (let k = 0; k < L; k++) {
    for (let v = 0; v < m.nVertices; v++) {
      let hv = 0;
      for (let j = 3 * v; j < 3 * v + 3; j++) if (m.vertexCells[j] >= 0) hv += m.vertexKiteArea[j] * H[k * nc + m.vertexCells[j]];
      hv /= m.vertexArea[v];
      qv[v] = hv > 0 ? p.coriolisVertex[v] / hv : 0;
    }
    for (let e = 0; e < ne; e++) restPv[k * ne + e] = 0.5 * (qv[m.edgeVertices[2 * e]] + qv[m.edgeVertices[2 * e + 1]]);
  }
  // Coriolis coefficients: ½ W_{e,e'} l_{e'}/d_e Ĥ_{k,e'} (q̄_{k,e} + q̄_{k,e'}), zero on coastline edges
  const nnz = m.tangentOffset[ne];
  const coriolisCoef = new Float64Array(L * nnz);
  for (let k = 0; k < L; k++) {
    for (let e = 0; e < ne; e++) {
      if (!m.edgeOpen[e]) continue;
      for (let q = m.tangentOffset[e]; q < m.tangentOffset[e + 1]; q++) {
        const e2 = m.tangentIndex[q];
        coriolisCoef[k * nnz + q] = 0.5 * m.tangentCoef[q] * Hedge[k * ne + e2] * (restPv[k * ne + e] + restPv[k * ne + e2]);
      }
    }
  }

  const counters: OperatorCounters = { matvecs: 0, innerProducts: 0 };
  const Mp = new Float64Array(L * nc); // Montgomery anomaly M' = 𝒢 h' (work)
  const { cellEdgeOffset: cOff, cellEdgeIndex: cIdx, cellEdgeSign: cSgn, edgeLength: len, cellArea } = m;
  const { edgeCells: ec, edgeCellDistance: dc, edgeOpen, tangentOffset: tOff, tangentIndex: tIdx } = m;

  // precombined continuity coefficients −n_{e,i} l_e Ĥ_{k,e}/A_i per layer and cell-edge slot, and 1/d_e
  const nSlots = cOff[nc];
  const contCoef = new Float64Array(L * nSlots);
  for (let k = 0; k < L; k++) {
    for (let i = 0; i < nc; i++) {
      for (let q = cOff[i]; q < cOff[i + 1]; q++) {
        const e = cIdx[q];
        contCoef[k * nSlots + q] = (-cSgn[q] * len[e] * Hedge[k * ne + e]) / cellArea[i];
      }
    }
  }
  const invD = Float64Array.from(dc, (d) => 1 / d);

  /** out = L x in layer variables. Arrays are aliased to locals so the loops read them from registers. */
  function applyLayers(out: Float64Array, x: Float64Array): void {
    const G = coupling, M = Mp, cc = coriolisCoef, kc = contCoef, inv = invD;
    const to = tOff, ti = tIdx, co = cOff, ci = cIdx, edges = ec, open = edgeOpen;
    // M'_k = Σ_j 𝒢_kj h'_j per cell
    for (let i = 0; i < nc; i++) {
      for (let k = 0; k < L; k++) {
        let s = 0;
        for (let j = 0; j < L; j++) s += G[k * L + j] * x[j * nc + i];
        M[k * nc + i] = s;
      }
    }
    for (let k = 0; k < L; k++) {
      const uOff = uOffset + k * ne, hOff = k * nc, cOffK = k * nnz, sOffK = k * nSlots;
      // momentum: Coriolis with rest PV minus the Montgomery gradient
      for (let e = 0; e < ne; e++) {
        if (open[e] === 0) { out[uOff + e] = 0; continue; }
        let acc = 0;
        const end = to[e + 1];
        for (let q = to[e]; q < end; q++) acc += cc[cOffK + q] * x[uOff + ti[q]];
        out[uOff + e] = acc - (M[hOff + edges[2 * e + 1]] - M[hOff + edges[2 * e]]) * inv[e];
      }
      // continuity: −D(Ĥ_k u_k)
      for (let i = 0; i < nc; i++) {
        let acc = 0;
        const end = co[i + 1];
        for (let q = co[i]; q < end; q++) acc += kc[sOffK + q] * x[uOff + ci[q]];
        out[hOff + i] = acc;
      }
    }
  }

  // the same L x as a WebAssembly kernel (stencils padded to fixed widths); null = applyLayers above
  const wasmApply = model.kernels === "wasm"
    ? wasmRestOperator({
      nLayers: L, nCells: nc, nEdges: ne, tangentOffset: tOff, tangentIndex: tIdx, coriolisCoef, cellEdgeOffset: cOff, cellEdgeIndex: cIdx,
      contCoef, coupling, invDistance: invD, edgeCells: m.edgeCellsClamped, edgeOpen,
    })
    : null;
  const applyL = wasmApply ?? applyLayers;

  // interface variables: η'_l = Σ_{j≥l} h'_j
  function toInterface(out: Float64Array, x: Float64Array): void {
    for (let i = 0; i < nc; i++) {
      let s = 0;
      for (let l = L - 1; l >= 0; l--) { s += x[l * nc + i]; out[l * nc + i] = s; }
    }
    for (let q = uOffset; q < n; q++) out[q] = x[q];
  }
  function fromInterface(out: Float64Array, y: Float64Array): void {
    for (let i = 0; i < nc; i++) {
      for (let l = 0; l < L; l++) out[l * nc + i] = y[l * nc + i] - (l + 1 < L ? y[(l + 1) * nc + i] : 0);
    }
    for (let q = uOffset; q < n; q++) out[q] = y[q];
  }
  const interfaceWeights = new Float64Array(n);
  for (let l = 0; l < L; l++) for (let i = 0; i < nc; i++) interfaceWeights[l * nc + i] = cellArea[i] * p.reducedGravity[l];
  for (let k = 0; k < L; k++) {
    for (let e = 0; e < ne; e++) interfaceWeights[uOffset + k * ne + e] = len[e] * dc[e] * Hedge[k * ne + e];
  }

  // deepest column and largest |f|, for the analytic bound
  const fastestSpeed = deepestColumnSpeed(p.reducedGravity, p.nominalThickness, p.bottom);
  let maxCoriolis = 0;
  for (let v = 0; v < m.nVertices; v++) maxCoriolis = Math.max(maxCoriolis, Math.abs(p.coriolisVertex[v]));

  const tmpA = new Float64Array(n), tmpB = new Float64Array(n), solveTmp = new Float64Array(n);
  let solver: OperatorShiftedSolver | undefined;
  const interfaceOp: { -readonly [K in keyof LinearOperator]: LinearOperator[K] } = {
    n, weights: interfaceWeights, skew: true, counters,
    apply(out, y) {
      fromInterface(tmpA, y);
      applyL(tmpB, tmpA);
      toInterface(out, tmpB);
      counters.matvecs++;
    },
    shiftedSolve(y, c, gamma) {
      op.shiftedSolver().solve(y, c, gamma);
    },
    complexShiftedSolver() {
      return op.shiftedSolver().complex;
    },
  };
  const op: RestLinearOperator & { spectralBound: number } = {
    n, layout, counters, skew: true, spectralBound: Infinity,
    restThickness: H, edgeThickness: Hedge, restPv, coriolisCoef, coupling, fastestSpeed, maxCoriolis,
    interfaceForm: interfaceOp,
    multiplyAddsPerMatvec: L * L * nc + L * (nnz + 2 * ne + m.cellEdgeOffset[nc]),
    apply(out, x) {
      applyL(out, x);
      counters.matvecs++;
    },
    toInterface, fromInterface,
    shiftedSolver(options) {
      solver ??= operatorShiftedSolver(interfaceOp, m, L, op.multiplyAddsPerMatvec, options);
      return solver;
    },
    solve(out, b, gamma) {
      const s = op.shiftedSolver();
      toInterface(solveTmp, b);
      s.solve(solveTmp, solveTmp, gamma);
      fromInterface(out, solveTmp);
      applyLayers(solveTmp, out);
      counters.matvecs++;
      for (let q = 0; q < uOffset; q++) out[q] = b[q] + gamma * solveTmp[q];
    },
    energyDot(a, b) {
      toInterface(tmpA, a);
      toInterface(tmpB, b);
      let s = 0;
      for (let q = 0; q < n; q++) s += interfaceWeights[q] * tmpA[q] * tmpB[q];
      return s;
    },
  };

  const mode = opts.spectralBound ?? "auto";
  let bound: number;
  if (mode === "auto" && isRegularHexMesh(m)) {
    bound = hexSpectralBound(maxCoriolis, fastestSpeed, m.spacing, opts.margin ?? 0.02);
  } else {
    const saved = { ...counters };
    const est = estimateSpectralBound(interfaceOp, { maxIterations: 80, tol: 0, margin: 0 }).estimate;
    counters.matvecs = saved.matvecs;
    counters.innerProducts = saved.innerProducts;
    bound = est * (1 + (opts.margin ?? 0.1));
  }
  op.spectralBound = bound;
  interfaceOp.spectralBound = bound;
  return op;
}
