/**
 * A planar Voronoi C-grid mesh in flat typed arrays.
 *
 * Conventions (Thuburn et al. 2009):
 * - edge e joins cells `edgeCells[2e]` (c1) and `edgeCells[2e+1]` (c2); its unit normal points from c1 to c2.
 *   On a closed basin a coastline edge has c2 = -1 (the outside); its normal velocity is held at zero.
 * - `edgeVertices[2e]`, `edgeVertices[2e+1]` = (v1, v2) with x(v2) - x(v1) along +t, t = k × n.
 * - cell → edges/vertices/neighbours are CSR lists sharing `cellEdgeOffset`; vertex j of a cell lies between
 *   edge j and edge j+1 (counter-clockwise).
 * - vertex → cells/edges: exactly 3 each, `-1` for a dry cell outside a basin.
 * Units: metres and square metres.
 */
export interface Mesh {
  readonly kind: "periodic" | "basin";
  readonly nCells: number;
  readonly nEdges: number;
  readonly nVertices: number;
  /** Domain size of the periodic torus, or the bounding box of the basin lattice [m]. */
  readonly width: number;
  readonly height: number;
  /** Nominal centre spacing of the lattice [m]. */
  readonly spacing: number;

  readonly cellX: Float64Array;
  readonly cellY: Float64Array;
  /** Area of each primal cell [m²]. */
  readonly cellArea: Float64Array;
  /** CSR offsets, length nCells + 1, shared by the four cell lists below. */
  readonly cellEdgeOffset: Int32Array;
  readonly cellEdgeIndex: Int32Array;
  /** +1 if the edge normal points out of the cell, -1 otherwise. */
  readonly cellEdgeSign: Float64Array;
  readonly cellVertexIndex: Int32Array;
  /** Neighbour across the matching edge, -1 for the outside. */
  readonly cellNeighbor: Int32Array;
  /** Area of the kite (cell, vertex) for the matching vertex [m²]. */
  readonly cellKiteArea: Float64Array;

  readonly edgeX: Float64Array;
  readonly edgeY: Float64Array;
  readonly edgeNormalX: Float64Array;
  readonly edgeNormalY: Float64Array;
  readonly edgeCells: Int32Array;
  readonly edgeVertices: Int32Array;
  /** Length of the primal edge, l_e [m]. */
  readonly edgeLength: Float64Array;
  /** Distance between the two cell centres, d_e [m] (the lattice value on coastline edges). */
  readonly edgeCellDistance: Float64Array;
  /** 1 for an edge whose normal velocity is prognostic, 0 for a coastline edge. */
  readonly edgeOpen: Uint8Array;

  readonly vertexX: Float64Array;
  readonly vertexY: Float64Array;
  /** Area of the dual triangle, counting only wet kites [m²]. */
  readonly vertexArea: Float64Array;
  readonly vertexCells: Int32Array;
  readonly vertexEdges: Int32Array;
  /** +1 if the edge normal circulates counter-clockwise around the vertex. */
  readonly vertexEdgeSign: Float64Array;
  /** Kite area of `vertexCells[3v+j]` at v, 0 for a dry cell [m²]. */
  readonly vertexKiteArea: Float64Array;
  /** 1 if all three cells and edges around the vertex are wet and open. */
  readonly vertexInterior: Uint8Array;

  /** TRiSK tangential reconstruction: CSR over edges. */
  readonly tangentOffset: Int32Array;
  readonly tangentIndex: Int32Array;
  /** W_{e,e'} of Thuburn et al. (2009), antisymmetric. */
  readonly tangentWeight: Float64Array;
  /** W_{e,e'} l_{e'} / d_e, the factor the kernels use. */
  readonly tangentCoef: Float64Array;

  // --- precombined read-only coefficients for the fused tendency kernels (see `kernelCoefficients`)
  /** Per cell-edge slot, sign·l_e / A_i: the divergence weight [1/m]. */
  readonly cellEdgeDivCoef: Float64Array;
  /** Per cell-edge slot, l_e d_e / (4 A_i): the kinetic-energy weight [1]. */
  readonly cellEdgeKeCoef: Float64Array;
  /** `edgeCells` with the outside (-1) of a coastline edge replaced by its wet cell. */
  readonly edgeCellsClamped: Int32Array;
  /** 1 / d_e [1/m]. */
  readonly edgeInvDistance: Float64Array;
  /** Per vertex-edge slot, sign·d_e / A_v; 0 at non-interior vertices (free slip) [1/m]. */
  readonly vertexCurlCoef: Float64Array;
  /** Per vertex-cell slot, kite fraction A_iv / A_v; 0 for a dry cell. */
  readonly vertexKiteFraction: Float64Array;
  /** `vertexCells` with dry cells (-1) replaced by a wet cell of the same vertex (their fraction is 0). */
  readonly vertexCellsClamped: Int32Array;
}
