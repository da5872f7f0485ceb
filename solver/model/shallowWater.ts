import type { Mesh } from "../mesh/types.js";
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

export class ShallowWaterModel {
  readonly layout: StateLayout;
  readonly n: number;
  /** Tendency evaluations since creation. */
  rhsEvaluations = 0;
  private readonly w: Work;

  constructor(readonly mesh: Mesh, readonly params: ModelParams) {
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
