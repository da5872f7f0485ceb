import type { Mesh } from "../mesh/types.js";
import { KernelMemoryBuilder, padStencil, type KernelExports } from "../kernels/wasm.js";
import {
  addScaled, cellContinuityBernoulli, edgeFluxAndPv, edgeMomentum, edgeThickness, linearDrag, paddedLayers, vectorLaplacian,
  vertexPotentialVorticity, windForcing,
} from "./terms.js";

/**
 * Physical parameters resolved onto the mesh (SI units). Layers are ordered top (0) to bottom (L−1).
 */
export interface ModelParams {
  readonly nLayers: number;
  /** g [m/s²]. */
  readonly gravity: number;
  /** ρ_k [kg/m³], increasing downward. */
  readonly densities: readonly number[];
  /** Boussinesq reference density ρ0 [kg/m³] (= ρ_1). */
  readonly rho0: number;
  /** g'_1 = g ρ_1/ρ0, g'_k = g (ρ_k − ρ_{k−1})/ρ0 [m/s²]. */
  readonly reducedGravity: Float64Array;
  /** Resting thickness of each layer where the bottom is deepest [m]. */
  readonly nominalThickness: readonly number[];
  /** Height of the sea floor at cells, b (negative below the resting surface z = 0) [m]. */
  readonly bottom: Float64Array;
  /** Coriolis parameter at vertices [1/s]. */
  readonly coriolisVertex: Float64Array;
  /** f0 and β of the plane, for diagnostics [1/s], [1/(m s)]. */
  readonly f0: number;
  readonly beta: number;
  /** Normal wind stress at edges τ·n [N/m²], or null. */
  readonly windStress: Float64Array | null;
  /** Linear bottom drag rate r [1/s]. */
  readonly bottomDrag: number;
  /** Laplacian viscosity ν2 [m²/s]. */
  readonly viscosity: number;
  /** Biharmonic viscosity ν4 [m⁴/s]. */
  readonly biharmonic: number;
}

/**
 * The state vector of every stepper is one Float64Array:
 *   x[k·nCells + i]                  layer thickness h_k at cell i [m]
 *   x[L·nCells + k·nEdges + e]       normal velocity u_k at edge e [m/s]
 */
export interface StateLayout {
  readonly nLayers: number;
  readonly nCells: number;
  readonly nEdges: number;
  /** Offset of the velocity block, L·nCells. */
  readonly uOffset: number;
  /** Total length L·(nCells + nEdges). */
  readonly n: number;
}

export function stateLayout(mesh: Mesh, nLayers: number): StateLayout {
  const uOffset = nLayers * mesh.nCells;
  return { nLayers, nCells: mesh.nCells, nEdges: mesh.nEdges, uOffset, n: uOffset + nLayers * mesh.nEdges };
}

/** Work arrays of one tendency evaluation, allocated once per model. */
interface Work {
  /** F_e, q_e and F_e q_e per edge and layer, [P·e + k] with P = paddedLayers(L) (see terms.ts). */
  fluxAll: Float64Array; qEdgeAll: Float64Array; fluxPvAll: Float64Array;
  /** P·tangentIndex[t] (read-only, set at construction). */
  tangentSlot: Int32Array;
  /** q_v per vertex and layer, [P·v + k]. */
  qVertexAll: Float64Array;
  /** B = K + M per cell and layer, [P·i + k]. */
  bernoulli: Float64Array;
  /** ĥ_e of the top layer (wind forcing only). */
  hEdge: Float64Array;
  div: Float64Array; lap: Float64Array; lap2: Float64Array; vort2: Float64Array;
}

/**
 * Which implementation runs the tendency (the four fused passes, forcing and dissipation): "wasm" (default; the
 * WebAssembly kernels of solver/kernels, falling back to the TypeScript loops where WebAssembly is unavailable)
 * or "typescript" (the loops of terms.ts, kept as the reference the kernels are tested against). Both compute the
 * same values up to round-off.
 */
export type KernelChoice = "wasm" | "typescript";

/** The tendency in a kernel memory: input and output vectors, work arrays and the mesh arrays they read. */
interface WasmTendency {
  run(out: Float64Array, x: Float64Array): void;
}

export class ShallowWaterModel {
  readonly layout: StateLayout;
  readonly n: number;
  /** Tendency evaluations since creation. */
  rhsEvaluations = 0;
  private readonly w: Work;
  /** Built at the first tendency evaluation; null = TypeScript loops. */
  private wasm: WasmTendency | null | undefined;

  constructor(readonly mesh: Mesh, readonly params: ModelParams, readonly kernels: KernelChoice = "wasm") {
    this.layout = stateLayout(mesh, params.nLayers);
    this.n = this.layout.n;
    const { nCells: nc, nEdges: ne, nVertices: nv } = mesh;
    const L = params.nLayers;
    const P = paddedLayers(L);
    this.w = {
      fluxAll: new Float64Array(P * ne), qEdgeAll: new Float64Array(P * ne), fluxPvAll: new Float64Array(P * ne),
      tangentSlot: mesh.tangentIndex.map((e) => P * e), qVertexAll: new Float64Array(P * nv), bernoulli: new Float64Array(P * nc),
      hEdge: new Float64Array(ne),
      div: new Float64Array(nc), lap: new Float64Array(ne), lap2: new Float64Array(ne), vort2: new Float64Array(nv),
    };
  }

  /**
   * out = F(x): the full tendency of thickness and velocity (Ringler et al. 2010), by four fused passes over all
   * layers (vertices, edges, cells, edges; see terms.ts) and the optional forcing and dissipation terms.
   */
  tendency(out: Float64Array, x: Float64Array, _t: number): void {
    this.rhsEvaluations++;
    const { mesh: m, params: p, w } = this;
    const { nLayers: L, nEdges: ne, uOffset } = this.layout;
    if (this.wasm === undefined) this.wasm = this.kernels === "wasm" ? wasmTendency(m, p, this.layout) : null;
    if (this.wasm) {
      this.wasm.run(out, x); // the passes below, forcing and dissipation included, in the same order
      return;
    }
    vertexPotentialVorticity(w.qVertexAll, m, x, uOffset, L, p.coriolisVertex);
    edgeFluxAndPv(w.fluxAll, w.qEdgeAll, w.fluxPvAll, m, x, uOffset, L, w.qVertexAll);
    cellContinuityBernoulli(out, w.bernoulli, m, x, uOffset, L, w.fluxAll, p.bottom, p.reducedGravity);
    edgeMomentum(out, m, uOffset, L, w.fluxAll, w.qEdgeAll, w.fluxPvAll, w.bernoulli, w.tangentSlot);
    if (p.windStress) {
      edgeThickness(w.hEdge, m, x, 0);
      windForcing(out, uOffset, m, p.windStress, p.rho0, w.hEdge);
    }
    if (p.bottomDrag > 0) linearDrag(out, uOffset + (L - 1) * ne, m, x, uOffset + (L - 1) * ne, p.bottomDrag);
    if (p.viscosity > 0 || p.biharmonic > 0) {
      for (let k = 0; k < L; k++) {
        const uOff = uOffset + k * ne;
        vectorLaplacian(w.lap, m, x, uOff, w.div, w.vort2);
        if (p.viscosity > 0) addScaled(out, uOff, w.lap, p.viscosity, ne);
        if (p.biharmonic > 0) {
          vectorLaplacian(w.lap2, m, w.lap, 0, w.div, w.vort2);
          addScaled(out, uOff, w.lap2, -p.biharmonic, ne);
        }
      }
    }
  }

  /** Resting state: flat interfaces at the nominal depths, bottom layer filling down to the sea floor. */
  restState(out: Float64Array = new Float64Array(this.n)): Float64Array {
    const { nLayers: L, nCells: nc } = this.layout;
    const H = this.params.nominalThickness;
    out.fill(0);
    for (let i = 0; i < nc; i++) {
      let upper = 0;
      for (let k = 0; k < L - 1; k++) {
        out[k * nc + i] = H[k];
        upper += H[k];
      }
      out[(L - 1) * nc + i] = -this.params.bottom[i] - upper;
    }
    return out;
  }
}

/**
 * The tendency — the four fused passes of terms.ts, then wind, drag and viscosity in the order `tendency` applies
 * them — as WebAssembly kernels over copies of the mesh arrays (stencils padded to fixed widths, see padStencil);
 * null where WebAssembly is unavailable. Allocates its memory once.
 */
function wasmTendency(m: Mesh, p: ModelParams, layout: StateLayout): WasmTendency | null {
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset, n } = layout;
  const nv = m.nVertices;
  const P = paddedLayers(L);
  const b = new KernelMemoryBuilder();
  const x = b.f64(n), out = b.f64(n);
  const qV = b.f64(P * nv), flux = b.f64(P * ne), qE = b.f64(P * ne), fq = b.f64(P * ne), bern = b.f64(P * nc);
  const ve = b.copy(m.vertexEdges), vc = b.copy(m.vertexCellsClamped), cc = b.copy(m.vertexCurlCoef);
  const kf = b.copy(m.vertexKiteFraction), vi = b.copy(m.vertexInterior), cor = b.copy(p.coriolisVertex);
  const ec = b.copy(m.edgeCellsClamped), ev = b.copy(m.edgeVertices), open = b.copy(m.edgeOpen), inv = b.copy(m.edgeInvDistance);
  const cells = padStencil(m.cellEdgeOffset, nc, (q) => 8 * m.cellEdgeIndex[q], [m.cellEdgeDivCoef, m.cellEdgeKeCoef]);
  const idx = b.copy(cells.index), dcf = b.copy(cells.coefs[0]), kcf = b.copy(cells.coefs[1]);
  const tangents = padStencil(m.tangentOffset, ne, (q) => 8 * P * m.tangentIndex[q], [m.tangentCoef]);
  const slot = b.copy(tangents.index), tw = b.copy(tangents.coefs[0]);
  const bottom = b.copy(p.bottom), rg = b.copy(p.reducedGravity);
  // forcing and dissipation: wind stress, and for the vector Laplacian s·l per cell slot, t·d per vertex slot
  const wind = p.windStress ? b.copy(p.windStress) : null; // pointer 0 tells the kernel "no wind" (x is at 0)
  const viscous = p.viscosity > 0 || p.biharmonic > 0;
  const slotSignLength = new Float64Array(m.cellEdgeOffset[nc]);
  for (let q = 0; q < slotSignLength.length; q++) slotSignLength[q] = m.cellEdgeSign[q] * m.edgeLength[m.cellEdgeIndex[q]];
  const lapCells = padStencil(m.cellEdgeOffset, nc, (q) => 8 * m.cellEdgeIndex[q], [slotSignLength]);
  const vertexSignDistance = m.vertexEdgeSign.map((s, j) => s * m.edgeCellDistance[m.vertexEdges[j]]);
  const lap = viscous ? {
    ci: b.copy(lapCells.index), sl: b.copy(lapCells.coefs[0]), area: b.copy(m.cellArea), vsd: b.copy(vertexSignDistance),
    vArea: b.copy(m.vertexArea), dc: b.copy(m.edgeCellDistance), len: b.copy(m.edgeLength),
    lap: b.f64(ne), lap2: b.f64(ne), div: b.f64(nc), vort: b.f64(nv),
  } : null;
  const k: KernelExports | null = b.build();
  if (!k) return null;
  const WC = cells.width, WT = tangents.width;
  const laplacian = (o: number, u: number) => {
    if (!lap) return;
    k.vectorLaplacian(o, u, nc, ne, nv, lapCells.width, lap.ci.ptr, lap.sl.ptr, lap.area.ptr, ve.ptr, lap.vsd.ptr, lap.vArea.ptr, vi.ptr,
      ec.ptr, ev.ptr, lap.dc.ptr, lap.len.ptr, open.ptr, lap.div.ptr, lap.vort.ptr);
  };
  return {
    run(o, xIn) {
      x.view.set(xIn);
      k.vertexPotentialVorticity(qV.ptr, x.ptr, nv, nc, ne, uOffset, L, P, ve.ptr, vc.ptr, cc.ptr, kf.ptr, vi.ptr, cor.ptr);
      k.edgeFluxAndPv(flux.ptr, qE.ptr, fq.ptr, x.ptr, ne, nc, uOffset, L, P, ec.ptr, ev.ptr, qV.ptr);
      k.cellContinuityBernoulli(out.ptr, bern.ptr, x.ptr, nc, ne, uOffset, L, P, WC, idx.ptr, dcf.ptr, kcf.ptr, bottom.ptr, rg.ptr, flux.ptr);
      k.edgeMomentum(out.ptr, ne, uOffset, L, P, WT, ec.ptr, open.ptr, inv.ptr, slot.ptr, tw.ptr, flux.ptr, qE.ptr, fq.ptr, bern.ptr);
      if (wind || p.bottomDrag > 0) k.windAndDrag(out.ptr, x.ptr, ne, uOffset, L, ec.ptr, open.ptr, wind ? wind.ptr : 0, p.rho0, p.bottomDrag);
      if (lap) {
        for (let layer = 0; layer < L; layer++) {
          const uo = out.ptr + 8 * (uOffset + layer * ne);
          laplacian(lap.lap.ptr, x.ptr + 8 * (uOffset + layer * ne));
          if (p.viscosity > 0) k.addScaled(uo, lap.lap.ptr, p.viscosity, ne);
          if (p.biharmonic > 0) {
            laplacian(lap.lap2.ptr, lap.lap.ptr);
            k.addScaled(uo, lap.lap2.ptr, -p.biharmonic, ne);
          }
        }
      }
      o.set(out.view);
    },
  };
}
