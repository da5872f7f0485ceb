import type { Mesh } from "./types.js";

/**
 * Cell-centred velocity vectors from the normal components on the edges (Perot 2000, "Conservation properties
 * of unstructured staggered mesh schemes", J. Comput. Phys. 159, 58–89, eq. for the cell velocity):
 *   U_i = (1/A_i) Σ_{e∈i} s_{e,i} l_e u_e (x_e − x_i),
 * with x_e the midpoint of the primal (Voronoi) edge, s_{e,i} = ±1 the outward sign and l_e the edge length.
 * It is ∮ (u·n) x ds / A, which equals the cell mean of u for any flow with ∇·u = 0 inside the cell, so a
 * uniform flow is reproduced exactly on every polygon with straight edges.
 * Coastline edges carry no flow (u_e = 0), so next to a coast the reconstruction sees only the open edges.
 */
export interface CellReconstruction {
  /** Per cell-edge slot (CSR of `cellEdgeOffset`): s l (x_e − x_i) / A_i and s l (y_e − y_i) / A_i [1]. */
  readonly coefX: Float64Array;
  readonly coefY: Float64Array;
}

/** Precompute the reconstruction weights once per mesh (periodic seams use the minimal image). */
export function cellReconstruction(m: Mesh): CellReconstruction {
  const { cellEdgeOffset: off, cellEdgeIndex: idx, cellEdgeSign: sgn, edgeVertices: ev, edgeLength: len } = m;
  const nSlots = off[m.nCells];
  const coefX = new Float64Array(nSlots);
  const coefY = new Float64Array(nSlots);
  const periodic = m.kind === "periodic";
  const wrap = (d: number, period: number) => (periodic ? d - period * Math.round(d / period) : d);
  for (let i = 0; i < m.nCells; i++) {
    const xi = m.cellX[i];
    const yi = m.cellY[i];
    for (let q = off[i]; q < off[i + 1]; q++) {
      const e = idx[q];
      const v1 = ev[2 * e];
      const v2 = ev[2 * e + 1];
      // midpoint of the Voronoi edge, relative to the cell centre
      const dx = 0.5 * (wrap(m.vertexX[v1] - xi, m.width) + wrap(m.vertexX[v2] - xi, m.width));
      const dy = 0.5 * (wrap(m.vertexY[v1] - yi, m.height) + wrap(m.vertexY[v2] - yi, m.height));
      const w = (sgn[q] * len[e]) / m.cellArea[i];
      coefX[q] = w * dx;
      coefY[q] = w * dy;
    }
  }
  return { coefX, coefY };
}

/** (outX, outY)_i = reconstructed velocity of the normal components u (one layer at `inOff`) [m/s]. */
export function reconstructCellVelocity(
  outX: Float64Array, outY: Float64Array, m: Mesh, r: CellReconstruction, u: Float64Array, inOff = 0, outOff = 0,
): void {
  const { cellEdgeOffset: off, cellEdgeIndex: idx } = m;
  const { coefX, coefY } = r;
  for (let i = 0; i < m.nCells; i++) {
    let ax = 0;
    let ay = 0;
    for (let q = off[i]; q < off[i + 1]; q++) {
      const ue = u[inOff + idx[q]];
      ax += coefX[q] * ue;
      ay += coefY[q] * ue;
    }
    outX[outOff + i] = ax;
    outY[outOff + i] = ay;
  }
}
