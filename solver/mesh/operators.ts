import type { Mesh } from "./types.js";
import { meshKernels } from "../kernels/meshKernels.js";

/**
 * The TRiSK linear operators of Thuburn et al. 2009, one layer at a time.
 * Each writes into `out` (length nCells, nEdges or nVertices) and allocates nothing.
 * `off` / `outOff` / `inOff` select a layer inside a layer-major buffer.
 * `divergence` and `gradient` run as WebAssembly kernels where available (solver/kernels/meshKernels.ts, same
 * operation order); the loops below are the reference and the fallback.
 */

/** (D F)_i = (1/A_i) Σ_{e∈i} n_{e,i} l_e F_e [1/s · unit of F / m]. */
export function divergence(out: Float64Array, m: Mesh, flux: Float64Array, outOff = 0, inOff = 0): void {
  const k = meshKernels(m);
  if (k) k.divergence(out, flux, outOff, inOff);
  else divergenceLoop(out, m, flux, outOff, inOff);
}

/** `divergence` as a TypeScript loop (the reference of the kernel, and its fallback). */
export function divergenceLoop(out: Float64Array, m: Mesh, flux: Float64Array, outOff = 0, inOff = 0): void {
  const { cellEdgeOffset: off, cellEdgeIndex: idx, cellEdgeSign: sgn, edgeLength: len, cellArea } = m;
  for (let i = 0; i < m.nCells; i++) {
    let acc = 0;
    for (let q = off[i]; q < off[i + 1]; q++) {
      const e = idx[q];
      acc += sgn[q] * len[e] * flux[inOff + e];
    }
    out[outOff + i] = acc / cellArea[i];
  }
}

/** (G φ)_e = (φ_c2 − φ_c1)/d_e on open edges, 0 on coastline edges. */
export function gradient(out: Float64Array, m: Mesh, phi: Float64Array, outOff = 0, inOff = 0): void {
  const k = meshKernels(m);
  if (k) k.gradient(out, phi, outOff, inOff);
  else gradientLoop(out, m, phi, outOff, inOff);
}

/** `gradient` as a TypeScript loop (the reference of the kernel, and its fallback). */
export function gradientLoop(out: Float64Array, m: Mesh, phi: Float64Array, outOff = 0, inOff = 0): void {
  const { edgeCells: ec, edgeCellDistance: dc, edgeOpen } = m;
  for (let e = 0; e < m.nEdges; e++) {
    out[outOff + e] = edgeOpen[e] ? (phi[inOff + ec[2 * e + 1]] - phi[inOff + ec[2 * e]]) / dc[e] : 0;
  }
}

/** (C u)_v = (1/A_v) Σ_{e∋v} t_{e,v} d_e u_e at interior vertices; 0 at coastline vertices (free slip). */
export function curl(out: Float64Array, m: Mesh, u: Float64Array, outOff = 0, inOff = 0): void {
  const { vertexEdges: ve, vertexEdgeSign: vs, edgeCellDistance: dc, vertexArea, vertexInterior } = m;
  for (let v = 0; v < m.nVertices; v++) {
    if (!vertexInterior[v]) { out[outOff + v] = 0; continue; }
    let acc = 0;
    for (let k = 3 * v; k < 3 * v + 3; k++) {
      const e = ve[k];
      acc += vs[k] * dc[e] * u[inOff + e];
    }
    out[outOff + v] = acc / vertexArea[v];
  }
}

/** (S ψ)_e = −(ψ_v2 − ψ_v1)/l_e: normal component of k × ∇ψ (a non-divergent flow). */
export function skewGradient(out: Float64Array, m: Mesh, psi: Float64Array, outOff = 0, inOff = 0): void {
  const { edgeVertices: ev, edgeLength: len, edgeOpen } = m;
  for (let e = 0; e < m.nEdges; e++) {
    out[outOff + e] = edgeOpen[e] ? -(psi[inOff + ev[2 * e + 1]] - psi[inOff + ev[2 * e]]) / len[e] : 0;
  }
}

/** Tangential reconstruction F^t_e = (1/d_e) Σ W_{e,e'} l_{e'} F_{e'} (Thuburn et al. 2009). */
export function tangential(out: Float64Array, m: Mesh, flux: Float64Array, outOff = 0, inOff = 0): void {
  const { tangentOffset: off, tangentIndex: idx, tangentCoef: w } = m;
  for (let e = 0; e < m.nEdges; e++) {
    let acc = 0;
    for (let q = off[e]; q < off[e + 1]; q++) acc += w[q] * flux[inOff + idx[q]];
    out[outOff + e] = acc;
  }
}

/** Kite-weighted cell → vertex average φ_v = (1/A_v) Σ A_iv φ_i (wet kites only). */
export function cellToVertex(out: Float64Array, m: Mesh, phi: Float64Array, outOff = 0, inOff = 0): void {
  const { vertexCells: vc, vertexKiteArea: ka, vertexArea } = m;
  for (let v = 0; v < m.nVertices; v++) {
    let acc = 0;
    for (let k = 3 * v; k < 3 * v + 3; k++) if (vc[k] >= 0) acc += ka[k] * phi[inOff + vc[k]];
    out[outOff + v] = acc / vertexArea[v];
  }
}

/** Kite-weighted vertex → cell average φ_i = Σ_v R_iv φ_v. */
export function vertexToCell(out: Float64Array, m: Mesh, phi: Float64Array, outOff = 0, inOff = 0): void {
  const { cellEdgeOffset: off, cellVertexIndex: vi, cellKiteArea: ka, cellArea } = m;
  for (let i = 0; i < m.nCells; i++) {
    let acc = 0;
    for (let q = off[i]; q < off[i + 1]; q++) acc += ka[q] * phi[inOff + vi[q]];
    out[outOff + i] = acc / cellArea[i];
  }
}

/** Sum of the cell areas, the area of the wet domain [m²]. */
export function domainArea(m: Mesh): number {
  let a = 0;
  for (let i = 0; i < m.nCells; i++) a += m.cellArea[i];
  return a;
}

/** Minimal-image displacement on a periodic mesh (plain difference on a basin). */
export function displacement(m: Mesh, x: number, y: number, x0: number, y0: number): [number, number] {
  let dx = x - x0;
  let dy = y - y0;
  if (m.kind === "periodic") {
    dx -= m.width * Math.round(dx / m.width);
    dy -= m.height * Math.round(dy / m.height);
  }
  return [dx, dy];
}
