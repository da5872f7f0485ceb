/**
 * Vertical-mode restriction R (layers → m modes) and prolongation P (modes → layers), the restricted
 * (modal) operator L̂ = R L P and the φ-functions of the restricted linear part (Gill 1982, §6.11).
 *
 * Structures: at every cell i the eigenvectors S_i of 𝒢 H_i (H_i = resting thicknesses of the column,
 * normalised S_iᵀ H_i S_i = H_tot,i I), and at every edge S_e from the edge thicknesses Ĥ_e. With a flat
 * bottom all of them are the same matrix; with topography they follow the local column, as the sheet describes.
 *
 *   restriction   ĥ_{a,i} = Σ_k S_i[k,a] h'_{k,i} / H_tot,i        û_{a,e} = Σ_k S_e[k,a] Ĥ_{k,e} u_{k,e} / H_tot,e
 *   prolongation  h'_{k,i} = H_{k,i} Σ_a S_i[k,a] ĥ_{a,i}          u_{k,e} = Σ_a S_e[k,a] û_{a,e}
 *
 * R P = I, and Π = P R is self-adjoint in the linear-energy inner product cell by cell and edge by edge
 * (kinetic part: Ĥ_e-orthogonal; potential part: 𝒢-orthogonal since 𝒢 H_i S_i = S_i Λ_i). In modal variables
 * the energy weights are diagonal: l_e d_e H_tot,e for û_a, A_i H_tot,i c²_{a,i} for ĥ_a, and L̂ is skew there.
 *
 * Modal layout (like a state with m "layers"): y[a·nCells + i] = ĥ_a, y[m·nCells + a·nEdges + e] = û_a.
 * L̂ is assembled once into m×m blocks on the sparsity of L: flat bottom → the blocks are diagonal and L̂ is
 * m decoupled single-layer operators with speeds c_a (cost ≈ m/L of L); with topography the blocks are full
 * (cost ≈ m²/L of L: the modes couple where the column changes).
 *
 * Linear part used by the steppers: M = Π̃ L Π with Π̃ = diag(I on thickness, Π_u on velocity). Since
 * M^j = Π̃ L P L̂^{j−1} R for j ≥ 1,
 *
 *   φ_k(τM) v = v/k! + τ Π̃ L P φ_{k+1}(τL̂) R v                                       (exact)
 *
 * whose thickness part is v/k! plus a layer divergence −D(Ĥ_k (P_u ·)_k): layer mass stays exact to round-off
 * for any approximation of φ_{k+1}(τL̂). With a flat bottom Π commutes with L, M = Π L Π, and the formula equals
 * the sheet's φ_k(τL*) v = P φ_k(τL̂) R v + (v − Π v)/k! (tested). With topography M differs from Π L Π only by
 * (I − Π_h) L Π on the thickness output — the price of exact layer mass (a per-cell Π_h cannot conserve it);
 * the nonzero spectrum of M is that of L̂ (purely imaginary).
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, OperatorCounters, PhiAction, PhiStats } from "../linalg/types.js";
import { hexSpectralBound, verticalModes } from "./modes.js";
import { inverseFactorial } from "../linalg/scalarPhi.js";
import { applyAtTimes, growVectors } from "../linalg/phiTimes.js";
import { KernelMemoryBuilder, padStencil, type Placed } from "../kernels/wasm.js";
import type { Mesh } from "../mesh/types.js";
import { divergence, divergenceLoop } from "../mesh/operators.js";
import type { ShallowWaterModel, StateLayout } from "./shallowWater.js";
import { isRegularHexMesh, restLinearOperator, type RestLinearOperator } from "./linear.js";
import { estimateSpectralBound } from "../linalg/spectralBound.js";
import { operatorShiftedSolver, type OperatorShiftedSolver, type ShiftedSolverOptions } from "./shiftedSolve.js";

export interface ModalRestriction {
  /** Number of kept modes m (1 = barotropic only). */
  readonly modes: number;
  readonly layout: StateLayout;
  /** Layout of the modal vectors (m "layers"). */
  readonly modalLayout: StateLayout;
  /** True when every column has the same structure (flat bottom): L̂ is block-diagonal by mode. */
  readonly flat: boolean;
  /** Largest speed c_a of each kept mode over the columns [m/s]. */
  readonly speeds: readonly number[];
  /** The rest-state operator L this restriction was built from. */
  readonly rest: RestLinearOperator;
  /** out (modal) = R x (x a layer perturbation). */
  restrict(out: Float64Array, x: Float64Array): void;
  /** out (layers) = P y. */
  prolong(out: Float64Array, y: Float64Array): void;
  /** out = Π x = P R x. */
  project(out: Float64Array, x: Float64Array): void;
  /** The modal operator L̂ = R L P (weights, skew, spectralBound set). */
  readonly operator: LinearOperator;
  /** out (layers) = Π̃ L P y for a modal y: thickness −D(Ĥ_k (P_u y)_k), velocity P_u (L̂ y)_u. Counted as one L̂ matvec. */
  liftApply(out: Float64Array, y: Float64Array): void;
  /** The restricted linear part M = Π̃ L Π as an operator on layer vectors. */
  readonly restricted: LinearOperator;
  /** Multiply-adds of one L̂ matvec as implemented (a deterministic cost measure; compare RestLinearOperator's). */
  readonly multiplyAddsPerMatvec: number;
  /**
   * The assembled coefficients of L̂ (read-only; for the benchmark's comparison loop). When `diagonal`, mode-major
   * diagonals: Coriolis [a·nnzTangent + q], gradient [a·2nEdges + 2e + side], divergence [a·nnzCell + q];
   * otherwise m×m blocks [slot·m² + a·m + b].
   */
  readonly coefficients: { readonly diagonal: boolean; readonly coriolis: Float64Array; readonly gradient: Float64Array; readonly divergence: Float64Array };
  /**
   * out = (I − γM)⁻¹ b for the restricted part M = Π̃ L Π on layer vectors (out and b may alias). Since
   * R Π̃ L P = L̂, y = R out solves (I − γL̂) y = R b (a sparse LU of the modal system, once per γ, cached) and
   * out = b + γ Π̃ L P y: the thickness correction is a layer divergence, so layer volumes are those of b.
   */
  solve(out: Float64Array, b: Float64Array, gamma: number): void;
  /** The sparse solver of the modal system behind `solve` (built on first use; `stats` in products with L̂). */
  shiftedSolver(options?: ShiftedSolverOptions): OperatorShiftedSolver;
}

export function modalRestriction(model: ShallowWaterModel, nModes: number, rest: RestLinearOperator = restLinearOperator(model)): ModalRestriction {
  const mesh = model.mesh;
  const p = model.params;
  const layout = model.layout;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset, n } = layout;
  const field = "stepper.linear";
  if (!Number.isInteger(nModes) || nModes < 1) throw new SolverError("bad-input", `${field}: modes:${nModes} must keep a whole number ≥ 1 of modes`, field);
  if (nModes > L) throw new SolverError("bad-input", `${field}: modes:${nModes} asks for more modes than the ${L} layer${L === 1 ? "" : "s"}`, field);
  const m = nModes;
  const mm = m * m;
  const H = rest.restThickness, Hedge = rest.edgeThickness;

  // per-column structures S[k,a] (L×m), Λ[a], H_tot
  const Scell = new Float64Array(nc * L * m), lamCell = new Float64Array(nc * m), HtotCell = new Float64Array(nc);
  const Sedge = new Float64Array(ne * L * m), HtotEdge = new Float64Array(ne);
  const speeds = new Array<number>(m).fill(0);
  const cache = new Map<string, { S: Float64Array; lam: number[] }>();
  const column = new Array<number>(L);
  function structureOf(thick: number[]): { S: Float64Array; lam: number[] } {
    const key = thick.join(",");
    let r = cache.get(key);
    if (!r) {
      const vm = verticalModes(p.reducedGravity, thick, p.f0);
      const S = new Float64Array(L * m);
      for (let k = 0; k < L; k++) for (let a = 0; a < m; a++) S[k * m + a] = vm.structure[k * L + a];
      r = { S, lam: vm.speeds.slice(0, m).map((c) => c * c) };
      cache.set(key, r);
    }
    return r;
  }
  for (let i = 0; i < nc; i++) {
    let tot = 0;
    for (let k = 0; k < L; k++) { column[k] = H[k * nc + i]; tot += column[k]; }
    const { S, lam } = structureOf(column);
    Scell.set(S, i * L * m);
    for (let a = 0; a < m; a++) { lamCell[i * m + a] = lam[a]; speeds[a] = Math.max(speeds[a], Math.sqrt(lam[a])); }
    HtotCell[i] = tot;
  }
  for (let e = 0; e < ne; e++) {
    let tot = 0;
    for (let k = 0; k < L; k++) { column[k] = Hedge[k * ne + e]; tot += column[k]; }
    Sedge.set(structureOf(column).S, e * L * m);
    HtotEdge[e] = tot;
  }
  const flat = cache.size === 1;

  // modal layout and energy weights
  const mOffset = m * nc;
  const nModal = m * (nc + ne);
  const modalLayout: StateLayout = { nLayers: m, nCells: nc, nEdges: ne, uOffset: mOffset, n: nModal };
  const weights = new Float64Array(nModal);
  for (let a = 0; a < m; a++) {
    for (let i = 0; i < nc; i++) weights[a * nc + i] = mesh.cellArea[i] * HtotCell[i] * lamCell[i * m + a];
    for (let e = 0; e < ne; e++) weights[mOffset + a * ne + e] = mesh.edgeLength[e] * mesh.edgeCellDistance[e] * HtotEdge[e];
  }

  // blocks of L̂ = R L P on the sparsity of L
  const { tangentOffset: tOff, tangentIndex: tIdx, edgeCells: ec, edgeOpen, edgeCellDistance: dc } = mesh;
  const { cellEdgeOffset: cOff, cellEdgeIndex: cIdx, cellEdgeSign: cSgn, edgeLength: len, cellArea } = mesh;
  const nnzT = tOff[ne], nnzC = cOff[nc];
  const corBlk = new Float64Array(nnzT * mm); // [q][a][b]
  const gradBlk = new Float64Array(ne * 2 * mm); // [e][side c1=0, c2=1][a][b], includes ∓1/d_e
  const divBlk = new Float64Array(nnzC * mm); // [q][a][b], includes −sign l_e/A_i
  const cor = rest.coriolisCoef;
  for (let e = 0; e < ne; e++) {
    if (!edgeOpen[e]) continue;
    const se = e * L * m;
    for (let q = tOff[e]; q < tOff[e + 1]; q++) {
      const s2 = tIdx[q] * L * m;
      for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) {
        let s = 0;
        for (let k = 0; k < L; k++) s += Sedge[se + k * m + a] * Hedge[k * ne + e] * cor[k * nnzT + q] * Sedge[s2 + k * m + b];
        corBlk[q * mm + a * m + b] = s / HtotEdge[e];
      }
    }
    for (let side = 0; side < 2; side++) {
      const c = ec[2 * e + side], sc = c * L * m, sign = side === 0 ? 1 : -1;
      for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) {
        let s = 0;
        for (let k = 0; k < L; k++) s += Sedge[se + k * m + a] * Hedge[k * ne + e] * Scell[sc + k * m + b];
        gradBlk[(e * 2 + side) * mm + a * m + b] = (sign * s * lamCell[c * m + b]) / (HtotEdge[e] * dc[e]);
      }
    }
  }
  for (let i = 0; i < nc; i++) {
    const si = i * L * m;
    for (let q = cOff[i]; q < cOff[i + 1]; q++) {
      const e = cIdx[q], se = e * L * m;
      for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) {
        let s = 0;
        for (let k = 0; k < L; k++) s += Scell[si + k * m + a] * Hedge[k * ne + e] * Sedge[se + k * m + b];
        divBlk[q * mm + a * m + b] = (-cSgn[q] * len[e] * s) / (cellArea[i] * HtotCell[i]);
      }
    }
  }
  // flat bottom: keep the diagonals only (the off-diagonal entries are round-off); with one mode the blocks are
  // 1×1 and the diagonal path is exact for any bottom
  const diagonal = flat || m === 1;
  // stored mode-major (one contiguous single-layer operator per mode) so each mode's loop streams its own data
  const corDiag = new Float64Array(nnzT * m), gradDiag = new Float64Array(ne * 2 * m), divDiag = new Float64Array(nnzC * m);
  if (diagonal) {
    for (let q = 0; q < nnzT; q++) for (let a = 0; a < m; a++) corDiag[a * nnzT + q] = corBlk[q * mm + a * m + a];
    for (let r = 0; r < 2 * ne; r++) for (let a = 0; a < m; a++) gradDiag[a * 2 * ne + r] = gradBlk[r * mm + a * m + a];
    for (let q = 0; q < nnzC; q++) for (let a = 0; a < m; a++) divDiag[a * nnzC + q] = divBlk[q * mm + a * m + a];
  }

  const counters: OperatorCounters = { matvecs: 0, innerProducts: 0 };

  /** Velocity part of L̂ y into out (modal layout, velocity block only). */
  function applyVelocity(out: Float64Array, y: Float64Array): void {
    if (diagonal) {
      // arrays aliased to locals so the loops do not reload them from the closure
      const cd = corDiag, gd = gradDiag, to = tOff, ti = tIdx, edges = ec, open = edgeOpen;
      for (let a = 0; a < m; a++) {
        const uo = mOffset + a * ne, ho = a * nc, co = a * nnzT, go = a * 2 * ne;
        for (let e = 0; e < ne; e++) {
          if (open[e] === 0) { out[uo + e] = 0; continue; }
          let acc = 0;
          const end = to[e + 1];
          for (let q = to[e]; q < end; q++) acc += cd[co + q] * y[uo + ti[q]];
          acc += gd[go + 2 * e] * y[ho + edges[2 * e]] + gd[go + 2 * e + 1] * y[ho + edges[2 * e + 1]];
          out[uo + e] = acc;
        }
      }
      return;
    }
    // m×m blocks (modes couple over topography); arrays aliased to locals for the loops
    const cb = corBlk, gb = gradBlk, to = tOff, ti = tIdx, edges = ec, open = edgeOpen;
    if (m === 2) {
      // two modes written out: the general a/b loops cost several times more in V8
      const u0 = mOffset, u1 = mOffset + ne;
      for (let e = 0; e < ne; e++) {
        if (open[e] === 0) { out[u0 + e] = 0; out[u1 + e] = 0; continue; }
        let acc0 = 0, acc1 = 0;
        const end = to[e + 1];
        for (let q = to[e]; q < end; q++) {
          const e2 = ti[q], blk = 4 * q;
          const y0 = y[u0 + e2], y1 = y[u1 + e2];
          acc0 += cb[blk] * y0 + cb[blk + 1] * y1;
          acc1 += cb[blk + 2] * y0 + cb[blk + 3] * y1;
        }
        const c1 = edges[2 * e], c2 = edges[2 * e + 1], g1 = 8 * e, g2 = 8 * e + 4;
        const h10 = y[c1], h11 = y[nc + c1], h20 = y[c2], h21 = y[nc + c2];
        out[u0 + e] = acc0 + gb[g1] * h10 + gb[g1 + 1] * h11 + gb[g2] * h20 + gb[g2 + 1] * h21;
        out[u1 + e] = acc1 + gb[g1 + 2] * h10 + gb[g1 + 3] * h11 + gb[g2 + 2] * h20 + gb[g2 + 3] * h21;
      }
      return;
    }
    for (let e = 0; e < ne; e++) {
      for (let a = 0; a < m; a++) out[mOffset + a * ne + e] = 0;
      if (open[e] === 0) continue;
      const end = to[e + 1];
      for (let q = to[e]; q < end; q++) {
        const e2 = ti[q], blk = q * mm;
        for (let a = 0; a < m; a++) {
          let acc = 0;
          for (let b = 0; b < m; b++) acc += cb[blk + a * m + b] * y[mOffset + b * ne + e2];
          out[mOffset + a * ne + e] += acc;
        }
      }
      for (let side = 0; side < 2; side++) {
        const c = edges[2 * e + side], blk = (e * 2 + side) * mm;
        for (let a = 0; a < m; a++) {
          let acc = 0;
          for (let b = 0; b < m; b++) acc += gb[blk + a * m + b] * y[b * nc + c];
          out[mOffset + a * ne + e] += acc;
        }
      }
    }
  }
  /** Thickness part of L̂ y. */
  function applyThickness(out: Float64Array, y: Float64Array): void {
    if (diagonal) {
      const dd = divDiag, co = cOff, ci = cIdx;
      for (let a = 0; a < m; a++) {
        const uo = mOffset + a * ne, ho = a * nc, dOff = a * nnzC;
        for (let i = 0; i < nc; i++) {
          let acc = 0;
          const end = co[i + 1];
          for (let q = co[i]; q < end; q++) acc += dd[dOff + q] * y[uo + ci[q]];
          out[ho + i] = acc;
        }
      }
      return;
    }
    const db = divBlk, co = cOff, ci = cIdx;
    if (m === 2) {
      const u0 = mOffset, u1 = mOffset + ne;
      for (let i = 0; i < nc; i++) {
        let acc0 = 0, acc1 = 0;
        const end = co[i + 1];
        for (let q = co[i]; q < end; q++) {
          const e = ci[q], blk = 4 * q;
          const y0 = y[u0 + e], y1 = y[u1 + e];
          acc0 += db[blk] * y0 + db[blk + 1] * y1;
          acc1 += db[blk + 2] * y0 + db[blk + 3] * y1;
        }
        out[i] = acc0;
        out[nc + i] = acc1;
      }
      return;
    }
    for (let i = 0; i < nc; i++) {
      for (let a = 0; a < m; a++) out[a * nc + i] = 0;
      const end = co[i + 1];
      for (let q = co[i]; q < end; q++) {
        const e = ci[q], blk = q * mm;
        for (let a = 0; a < m; a++) {
          let acc = 0;
          for (let b = 0; b < m; b++) acc += db[blk + a * m + b] * y[mOffset + b * ne + e];
          out[a * nc + i] += acc;
        }
      }
    }
  }

  function restrict(out: Float64Array, x: Float64Array): void {
    for (let i = 0; i < nc; i++) {
      const si = i * L * m;
      for (let a = 0; a < m; a++) {
        let s = 0;
        for (let k = 0; k < L; k++) s += Scell[si + k * m + a] * x[k * nc + i];
        out[a * nc + i] = s / HtotCell[i];
      }
    }
    for (let e = 0; e < ne; e++) {
      const se = e * L * m;
      for (let a = 0; a < m; a++) {
        let s = 0;
        for (let k = 0; k < L; k++) s += Sedge[se + k * m + a] * Hedge[k * ne + e] * x[uOffset + k * ne + e];
        out[mOffset + a * ne + e] = s / HtotEdge[e];
      }
    }
  }
  function prolongVelocity(out: Float64Array, outOff: number, y: Float64Array): void {
    for (let e = 0; e < ne; e++) {
      const se = e * L * m;
      for (let k = 0; k < L; k++) {
        let s = 0;
        for (let a = 0; a < m; a++) s += Sedge[se + k * m + a] * y[mOffset + a * ne + e];
        out[outOff + k * ne + e] = s;
      }
    }
  }
  function prolong(out: Float64Array, y: Float64Array): void {
    for (let i = 0; i < nc; i++) {
      const si = i * L * m;
      for (let k = 0; k < L; k++) {
        let s = 0;
        for (let a = 0; a < m; a++) s += Scell[si + k * m + a] * y[a * nc + i];
        out[k * nc + i] = H[k * nc + i] * s;
      }
    }
    prolongVelocity(out, uOffset, y);
  }
  const modalTmp = new Float64Array(nModal), modalTmp2 = new Float64Array(nModal), layerU = new Float64Array(L * ne);
  function project(out: Float64Array, x: Float64Array): void {
    restrict(modalTmp, x);
    prolong(out, modalTmp);
  }
  function liftApply(out: Float64Array, y: Float64Array): void {
    counters.matvecs++;
    // velocity: P_u (L̂ y)_u
    applyVelocity(modalTmp2, y);
    prolongVelocity(out, uOffset, modalTmp2);
    // thickness: −D(Ĥ_k (P_u y)_k), the divergence of the layer transports (the mesh's divergence kernel)
    prolongVelocity(layerU, 0, y);
    for (let q = 0; q < L * ne; q++) layerU[q] *= Hedge[q];
    for (let k = 0; k < L; k++) div(out, mesh, layerU, k * nc, k * ne);
    for (let q = 0; q < L * nc; q++) out[q] = -out[q];
  }
  const div = model.kernels === "wasm" ? divergence : divergenceLoop;

  // the same operator as WebAssembly kernels (diagonal blocks, or two coupled modes); null = the loops above
  const wasm = model.kernels === "wasm" && (diagonal || m === 2)
    ? wasmModalOperator(mesh, m, diagonal, nModal, diagonal ? [corDiag, gradDiag, divDiag] : [corBlk, gradBlk, divBlk])
    : null;
  const modalOp: { -readonly [K in keyof LinearOperator]: LinearOperator[K] } = {
    n: nModal, weights, skew: true, counters,
    apply(out, y) {
      counters.matvecs++;
      if (wasm) {
        wasm(out, y);
        return;
      }
      applyThickness(out, y);
      applyVelocity(out, y);
    },
    shiftedSolve(y, c, gamma) {
      shiftedSolver().solve(y, c, gamma);
    },
    complexShiftedSolver() {
      return shiftedSolver().complex;
    },
  };
  const restrictTmp = new Float64Array(nModal);
  const restrictedOp: { -readonly [K in keyof LinearOperator]: LinearOperator[K] } = {
    n, counters,
    apply(out, x) {
      restrict(restrictTmp, x);
      liftApply(out, restrictTmp);
    },
  };

  // spectral bound of L̂: the analytic hexagonal bound with the fastest kept column speed, or an estimate
  const fMax = rest.maxCoriolis;
  let bound: number;
  if (isRegularHexMesh(mesh)) {
    bound = hexSpectralBound(fMax, speeds[0], mesh.spacing, 0.02);
  } else {
    const mv = counters.matvecs;
    bound = estimateSpectralBound(modalOp, { maxIterations: 80, tol: 0, margin: 0.1 }).bound;
    counters.matvecs = mv;
  }
  modalOp.spectralBound = bound;
  restrictedOp.spectralBound = bound;

  const multiplyAddsPerMatvec = (diagonal ? m : mm) * (nnzT + 2 * ne + nnzC);
  let solver: OperatorShiftedSolver | undefined;
  const solveModal = new Float64Array(nModal), solveLift = new Float64Array(n);
  function shiftedSolver(options?: ShiftedSolverOptions): OperatorShiftedSolver {
    solver ??= operatorShiftedSolver(modalOp, mesh, m, multiplyAddsPerMatvec, options);
    return solver;
  }
  return {
    modes: m, layout, modalLayout, flat, speeds, rest,
    restrict, prolong, project, operator: modalOp, liftApply, restricted: restrictedOp,
    multiplyAddsPerMatvec, shiftedSolver,
    solve(out, b, gamma) {
      const s = shiftedSolver();
      restrict(solveModal, b);
      s.solve(solveModal, solveModal, gamma);
      liftApply(solveLift, solveModal);
      for (let q = 0; q < n; q++) out[q] = b[q] + gamma * solveLift[q];
    },
    coefficients: diagonal
      ? { diagonal, coriolis: corDiag, gradient: gradDiag, divergence: divDiag }
      : { diagonal, coriolis: corBlk, gradient: gradBlk, divergence: divBlk },
  };
}

/**
 * L̂ y as WebAssembly kernels: per mode the single-layer operator of the diagonal blocks (mode-major coefficients,
 * `modalDiagonal`), or the 2×2-block operator (`modalTwo`). Stencils are padded to fixed widths (padStencil).
 * Returns null where WebAssembly is unavailable.
 */
function wasmModalOperator(
  mesh: Mesh, m: number, diagonal: boolean, nModal: number, [cor, grad, div]: readonly Float64Array[],
): ((out: Float64Array, y: Float64Array) => void) | null {
  const { nCells: nc, nEdges: ne } = mesh;
  const nnzT = mesh.tangentOffset[ne], nnzC = mesh.cellEdgeOffset[nc];
  const b = new KernelMemoryBuilder();
  const y = b.f64(nModal), o = b.f64(nModal);
  const ec = b.copy(mesh.edgeCellsClamped), open = b.copy(mesh.edgeOpen);
  const mOffset = m * nc;
  if (diagonal) {
    // stencil indices as absolute byte addresses of mode a's blocks of y (one index array per mode)
    const uAt = (a: number) => y.ptr + 8 * (mOffset + a * ne), hAt = (a: number) => y.ptr + 8 * a * nc;
    const tangents = padStencil(mesh.tangentOffset, ne, (q) => 8 * mesh.tangentIndex[q], Array.from({ length: m }, (_, a) => cor.subarray(a * nnzT, (a + 1) * nnzT)));
    const cells = padStencil(mesh.cellEdgeOffset, nc, (q) => 8 * mesh.cellEdgeIndex[q], Array.from({ length: m }, (_, a) => div.subarray(a * nnzC, (a + 1) * nnzC)));
    const ti = Array.from({ length: m }, (_, a) => b.copy(tangents.index.map((o) => uAt(a) + o)));
    const ci = Array.from({ length: m }, (_, a) => b.copy(cells.index.map((o) => uAt(a) + o)));
    const ecA = Array.from({ length: m }, (_, a) => b.copy(mesh.edgeCellsClamped.map((c) => hAt(a) + 8 * c)));
    const cd = tangents.coefs.map((c) => b.copy(c)), dd = cells.coefs.map((c) => b.copy(c));
    const gd: Placed<Float64Array>[] = [];
    for (let a = 0; a < m; a++) gd.push(b.copy(grad.slice(a * 2 * ne, (a + 1) * 2 * ne)));
    const k = b.build();
    if (!k) return null;
    const WT = tangents.width, WC = cells.width;
    return (out, yIn) => {
      y.view.set(yIn);
      for (let a = 0; a < m; a++) {
        k.modalDiagonal(o.ptr + 8 * a * nc, o.ptr + 8 * (mOffset + a * ne), nc, ne, WT, WC, cd[a].ptr, gd[a].ptr, dd[a].ptr, ti[a].ptr, ecA[a].ptr, open.ptr, ci[a].ptr);
      }
      out.set(o.view);
    };
  }
  const tangents = padStencil(mesh.tangentOffset, ne, (q) => 8 * mesh.tangentIndex[q], [cor], 4);
  const cells = padStencil(mesh.cellEdgeOffset, nc, (q) => 8 * mesh.cellEdgeIndex[q], [div], 4);
  const ti = b.copy(tangents.index), ci = b.copy(cells.index);
  const cb = b.copy(tangents.coefs[0]), db = b.copy(cells.coefs[0]), gb = b.copy(grad);
  const k = b.build();
  if (!k) return null;
  return (out, yIn) => {
    y.view.set(yIn);
    k.modalTwo(o.ptr, y.ptr, nc, ne, tangents.width, cells.width, cb.ptr, gb.ptr, db.ptr, ti.ptr, ec.ptr, open.ptr, ci.ptr);
    out.set(o.view);
  };
}

/**
 * Σ_k τ^k φ_k(τM) v[k] for the restricted linear part M = Π̃ L Π, from a φ-action of the modal operator L̂
 * built with maxPhi one higher than the caller's (see the file comment):
 *
 *   Σ_k τ^k φ_k(τM) v_k = Σ_k τ^k v_k / k! + Π̃ L P · Σ_k τ^{k+1} φ_{k+1}(τL̂) R v_k .
 */
export function restrictedPhiAction(r: ModalRestriction, modalPhi: PhiAction, maxPhi: number): PhiAction {
  const nModal = r.modalLayout.n;
  const w: Float64Array[] = [];
  for (let k = 0; k <= maxPhi + 1; k++) w.push(new Float64Array(nModal));
  const z = new Float64Array(nModal);
  const lifted = new Float64Array(r.layout.n);
  const stats: PhiStats = { matvecs: 0, innerProducts: 0, substeps: 0, errorEstimate: NaN, happyBreakdown: false };
  const zs: Float64Array[] = [];
  const oneZ: Float64Array[] = [z];
  const oneTau: number[] = [0];
  const oneOut: Float64Array[] = [z];
  /** outs[i] = Σ_k τ_i^k v_k/k! + Π̃ L P z_i for every time; w_{k+1} = R v_k does not depend on τ. */
  function run(outs: readonly Float64Array[], taus: readonly number[], v: readonly Float64Array[], zOut: readonly Float64Array[]): void {
    if (v.length > maxPhi + 1) throw new SolverError("bad-input", `phi index ${v.length - 1} exceeds maxPhi ${maxPhi}`, "phi.apply");
    w[0].fill(0);
    for (let k = 0; k <= maxPhi; k++) {
      if (k < v.length) r.restrict(w[k + 1], v[k]);
      else w[k + 1].fill(0);
    }
    if (taus.length === 1) modalPhi.apply(zOut[0], taus[0], w);
    else applyAtTimes(modalPhi, zOut, taus, w);
    for (let i = 0; i < taus.length; i++) {
      const out = outs[i], tau = taus[i];
      out.fill(0);
      for (let k = 0; k < v.length; k++) {
        const c = Math.pow(tau, k) * inverseFactorial(k), vk = v[k];
        for (let q = 0; q < out.length; q++) out[q] += c * vk[q];
      }
      r.liftApply(lifted, zOut[i]);
      for (let q = 0; q < out.length; q++) out[q] += lifted[q];
    }
    stats.matvecs = modalPhi.stats.matvecs + taus.length;
    stats.innerProducts = modalPhi.stats.innerProducts;
    stats.substeps = modalPhi.stats.substeps;
    stats.errorEstimate = modalPhi.stats.errorEstimate;
    stats.happyBreakdown = modalPhi.stats.happyBreakdown;
  }
  return {
    name: `${modalPhi.name} on ${r.modes} mode${r.modes === 1 ? "" : "s"}`,
    stats,
    apply(out, tau, v) {
      oneOut[0] = out; oneTau[0] = tau;
      run(oneOut, oneTau, v, oneZ);
    },
    applyTimes(outs, taus, v) {
      run(outs, taus, v, growVectors(zs, taus.length, nModal));
    },
  };
}
