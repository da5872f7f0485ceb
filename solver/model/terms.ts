import type { Mesh } from "../mesh/types.js";

/**
 * One function per term of the TRiSK multi-layer equations (numerics reference §3.6–3.7), for one layer.
 * `hOff` / `uOff` locate the layer inside layer-major buffers (h[k·nCells + i], u[k·nEdges + e]).
 * Every function writes or adds into arrays it is given and allocates nothing.
 */

/** ĥ_e = (h_c1 + h_c2)/2; on coastline edges the wet cell's value [m]. */
export function edgeThickness(out: Float64Array, m: Mesh, h: Float64Array, hOff: number): void {
  const ec = m.edgeCells;
  for (let e = 0; e < m.nEdges; e++) {
    const c2 = ec[2 * e + 1];
    const h1 = h[hOff + ec[2 * e]];
    out[e] = c2 >= 0 ? 0.5 * (h1 + h[hOff + c2]) : h1;
  }
}

/** Thickness flux F_e = ĥ_e u_e [m²/s]. */
export function thicknessFlux(out: Float64Array, m: Mesh, hEdge: Float64Array, u: Float64Array, uOff: number): void {
  for (let e = 0; e < m.nEdges; e++) out[e] = hEdge[e] * u[uOff + e];
}

/** Continuity: dh_i/dt = −(D F)_i [m/s]. */
export function continuity(out: Float64Array, outOff: number, m: Mesh, flux: Float64Array): void {
  const { cellEdgeOffset: off, cellEdgeIndex: idx, cellEdgeSign: sgn, edgeLength: len, cellArea } = m;
  for (let i = 0; i < m.nCells; i++) {
    let acc = 0;
    for (let q = off[i]; q < off[i + 1]; q++) {
      const e = idx[q];
      acc += sgn[q] * len[e] * flux[e];
    }
    out[outOff + i] = -acc / cellArea[i];
  }
}

/** Kinetic energy per unit mass at cells, K_i = (1/4A_i) Σ l_e d_e u_e² [m²/s²] (energy-conserving form). */
export function kineticEnergy(out: Float64Array, m: Mesh, u: Float64Array, uOff: number): void {
  const { cellEdgeOffset: off, cellEdgeIndex: idx, edgeLength: len, edgeCellDistance: dc, cellArea } = m;
  for (let i = 0; i < m.nCells; i++) {
    let acc = 0;
    for (let q = off[i]; q < off[i + 1]; q++) {
      const e = idx[q];
      const ue = u[uOff + e];
      acc += len[e] * dc[e] * ue * ue;
    }
    out[i] = (0.25 * acc) / cellArea[i];
  }
}

/**
 * Interface heights and Montgomery potential for all layers (reference §1.2):
 * η_k = b + Σ_{j≥k} h_j, M_k = Σ_{j≤k} g'_j η_j  [m], [m²/s²].
 */
export function montgomeryPotential(
  M: Float64Array, eta: Float64Array, h: Float64Array, bottom: Float64Array, reducedGravity: Float64Array, nLayers: number, nCells: number,
): void {
  for (let i = 0; i < nCells; i++) {
    let level = bottom[i];
    for (let k = nLayers - 1; k >= 0; k--) {
      level += h[k * nCells + i];
      eta[k * nCells + i] = level;
    }
    let pot = 0;
    for (let k = 0; k < nLayers; k++) {
      pot += reducedGravity[k] * eta[k * nCells + i];
      M[k * nCells + i] = pot;
    }
  }
}

/** Relative vorticity ζ_v = (C u)_v; zero at coastline vertices (free slip) [1/s]. */
export function relativeVorticity(out: Float64Array, m: Mesh, u: Float64Array, uOff: number): void {
  const { vertexEdges: ve, vertexEdgeSign: vs, edgeCellDistance: dc, vertexArea, vertexInterior } = m;
  for (let v = 0; v < m.nVertices; v++) {
    if (!vertexInterior[v]) { out[v] = 0; continue; }
    const k = 3 * v;
    const e0 = ve[k];
    const e1 = ve[k + 1];
    const e2 = ve[k + 2];
    out[v] = (vs[k] * dc[e0] * u[uOff + e0] + vs[k + 1] * dc[e1] * u[uOff + e1] + vs[k + 2] * dc[e2] * u[uOff + e2]) / vertexArea[v];
  }
}

/** Potential vorticity q_v = (ζ_v + f_v)/h_v with kite-averaged h_v, and its edge average q_e [1/(m s)]. */
export function potentialVorticity(
  qVertex: Float64Array, qEdge: Float64Array, m: Mesh, vorticity: Float64Array, h: Float64Array, hOff: number, coriolis: Float64Array,
): void {
  const { vertexCells: vc, vertexKiteArea: ka, vertexArea, edgeVertices: ev } = m;
  for (let v = 0; v < m.nVertices; v++) {
    const k = 3 * v;
    let hv = 0;
    for (let j = k; j < k + 3; j++) if (vc[j] >= 0) hv += ka[j] * h[hOff + vc[j]];
    hv /= vertexArea[v];
    qVertex[v] = (vorticity[v] + coriolis[v]) / hv;
  }
  for (let e = 0; e < m.nEdges; e++) qEdge[e] = 0.5 * (qVertex[ev[2 * e]] + qVertex[ev[2 * e + 1]]);
}

/**
 * Coriolis + vortex force, Q_e = Σ_{e'} W_{e,e'} (l_{e'}/d_e) F_{e'} (q_e + q_{e'})/2 (Ringler et al. 2010).
 * Writes (not adds) the momentum tendency of open edges and zero on coastline edges [m/s²].
 */
export function pvFlux(out: Float64Array, outOff: number, m: Mesh, flux: Float64Array, qEdge: Float64Array): void {
  const { tangentOffset: off, tangentIndex: idx, tangentCoef: w, edgeOpen } = m;
  for (let e = 0; e < m.nEdges; e++) {
    if (!edgeOpen[e]) { out[outOff + e] = 0; continue; }
    const qe = qEdge[e];
    let acc = 0;
    for (let q = off[e]; q < off[e + 1]; q++) {
      const e2 = idx[q];
      acc += w[q] * flux[e2] * (qe + qEdge[e2]);
    }
    out[outOff + e] = 0.5 * acc;
  }
}

/** Pressure and kinetic-energy gradient: du_e/dt −= (B_c2 − B_c1)/d_e with B = K + M. */
export function bernoulliGradient(out: Float64Array, outOff: number, m: Mesh, K: Float64Array, M: Float64Array, mOff: number): void {
  const { edgeCells: ec, edgeCellDistance: dc, edgeOpen } = m;
  for (let e = 0; e < m.nEdges; e++) {
    if (!edgeOpen[e]) continue;
    const c1 = ec[2 * e];
    const c2 = ec[2 * e + 1];
    out[outOff + e] -= (K[c2] + M[mOff + c2] - K[c1] - M[mOff + c1]) / dc[e];
  }
}

/** Wind stress on the top layer as a body force, τ_e/(ρ0 ĥ_e) [m/s²]. */
export function windForcing(out: Float64Array, outOff: number, m: Mesh, stress: Float64Array, rho0: number, hEdge: Float64Array): void {
  const open = m.edgeOpen;
  for (let e = 0; e < m.nEdges; e++) if (open[e]) out[outOff + e] += stress[e] / (rho0 * hEdge[e]);
}

/** Linear bottom drag on the bottom layer, −r u [m/s²]. */
export function linearDrag(out: Float64Array, outOff: number, m: Mesh, u: Float64Array, uOff: number, rate: number): void {
  for (let e = 0; e < m.nEdges; e++) out[outOff + e] -= rate * u[uOff + e];
}

/**
 * Vector Laplacian (∇²u)_e = (G δ)_e − (ζ_v2 − ζ_v1)/l_e with δ = D u, ζ = C u (free slip at coastlines).
 * `div` (nCells) and `vort` (nVertices) are work arrays; writes `out` (nEdges, zero on coastline edges).
 */
export function vectorLaplacian(out: Float64Array, m: Mesh, u: Float64Array, uOff: number, div: Float64Array, vort: Float64Array): void {
  const { cellEdgeOffset: off, cellEdgeIndex: idx, cellEdgeSign: sgn, edgeLength: len, cellArea } = m;
  for (let i = 0; i < m.nCells; i++) {
    let acc = 0;
    for (let q = off[i]; q < off[i + 1]; q++) {
      const e = idx[q];
      acc += sgn[q] * len[e] * u[uOff + e];
    }
    div[i] = acc / cellArea[i];
  }
  relativeVorticity(vort, m, u, uOff);
  const { edgeCells: ec, edgeVertices: ev, edgeCellDistance: dc, edgeOpen } = m;
  for (let e = 0; e < m.nEdges; e++) {
    out[e] = edgeOpen[e]
      ? (div[ec[2 * e + 1]] - div[ec[2 * e]]) / dc[e] - (vort[ev[2 * e + 1]] - vort[ev[2 * e]]) / len[e]
      : 0;
  }
}

/** out[outOff + e] += coef · lap[e]. */
export function addScaled(out: Float64Array, outOff: number, lap: Float64Array, coef: number, n: number): void {
  for (let e = 0; e < n; e++) out[outOff + e] += coef * lap[e];
}
