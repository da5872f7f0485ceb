import type { Mesh } from "../mesh/types.js";
import { divergence } from "../mesh/operators.js";
import { meshKernels } from "../kernels/meshKernels.js";

/**
 * Terms of the TRiSK multi-layer equations (Ringler et al. 2010, J. Comput. Phys. 229, 3065–3090): per-layer
 * functions for the terms used outside the fused passes (edge thickness, kinetic energy, vorticity, potential
 * vorticity, PV flux, wind, drag, viscosity), then the fused all-layer passes of the tendency.
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
 * Writes (not adds) the momentum tendency of open edges and zero on coastline edges [m/s²]. Runs as a
 * WebAssembly kernel where available (solver/kernels/meshKernels.ts, same operation order).
 */
export function pvFlux(out: Float64Array, outOff: number, m: Mesh, flux: Float64Array, qEdge: Float64Array): void {
  const k = meshKernels(m);
  if (k) k.pvFlux(out, outOff, flux, qEdge);
  else pvFluxLoop(out, outOff, m, flux, qEdge);
}

/** `pvFlux` as a TypeScript loop (the reference of the kernel, and its fallback). */
export function pvFluxLoop(out: Float64Array, outOff: number, m: Mesh, flux: Float64Array, qEdge: Float64Array): void {
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
  divergence(div, m, u, 0, uOff);
  relativeVorticity(vort, m, u, uOff);
  const { edgeCells: ec, edgeVertices: ev, edgeCellDistance: dc, edgeLength: len, edgeOpen } = m;
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

/*
 * Fused kernels used by ShallowWaterModel.tendency. Each walks one kind of mesh entity once for all layers,
 * reading precombined mesh coefficients (no divisions in inner loops), so the connectivity and coefficient arrays
 * are read once per evaluation instead of once per layer and term. Work arrays are layer-interleaved with a
 * padded stride P = paddedLayers(L) (a multiple of 3): entry [P·entity + k].
 *
 * Layers go in blocks of three lanes held in locals, at constant offsets 0, 1, 2 from the block's base in the
 * work arrays (a generic inner loop over layers with array accumulators measured ~2× slower in V8, and variable
 * lane offsets ~1.5× slower). Lanes past the last layer (padding) recompute layer L−1 from the state and store
 * that duplicate in the padding slots; they write the state-shaped outputs of layer L−1 with the same value
 * again, so every L ≥ 1 is handled exactly.
 *
 * Measured with tests/bench on 3-layer periodic meshes (figures in the commit messages): a per-term sequence
 * cost ~210 ns per cell·layer, these loops 110–120. They are the reference implementation now: the model runs the
 * same passes as WebAssembly kernels (solver/kernels/assembly/kernels.ts, same operation order) where it can, and
 * the tests check that both agree.
 */

/** Padded layer stride of the fused kernels' work arrays: L rounded up to a multiple of 3. */
export function paddedLayers(nLayers: number): number {
  return 3 * Math.ceil(nLayers / 3);
}

/** State layer of lane j of the block starting at layer k (padding lanes repeat the last layer). */
function lane(k: number, j: number, nLayers: number): number {
  return k + j < nLayers ? k + j : nLayers - 1;
}

/**
 * Vertex pass, all layers: ζ_v = Σ_j (s_vj d_j/A_v) u_j (0 at coastline vertices, free slip),
 * h_v = Σ_j (A_jv/A_v) h_j and q_v = (ζ_v + f_v)/h_v into `qVertex[P·v + k]`
 * (fuses relativeVorticity with the vertex half of potentialVorticity).
 */
export function vertexPotentialVorticity(
  qVertex: Float64Array, m: Mesh, x: Float64Array, uOffset: number, nLayers: number, coriolis: Float64Array,
): void {
  const nv = m.nVertices;
  const nc = m.nCells;
  const ne = m.nEdges;
  const ve = m.vertexEdges;
  const vc = m.vertexCellsClamped;
  const cc = m.vertexCurlCoef;
  const kf = m.vertexKiteFraction;
  const vi = m.vertexInterior;
  const L = nLayers;
  const P = paddedLayers(L);
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = uOffset + kb * ne, u1 = uOffset + k1 * ne, u2 = uOffset + k2 * ne;
    const h0 = kb * nc, h1 = k1 * nc, h2 = k2 * nc;
    for (let v = 0; v < nv; v++) {
      const j = 3 * v;
      const ca = vc[j], cb = vc[j + 1], cd = vc[j + 2];
      const fa = kf[j], fb = kf[j + 1], fd = kf[j + 2];
      const f = coriolis[v];
      let z0 = 0, z1 = 0, z2 = 0;
      if (vi[v] !== 0) {
        const ea = ve[j], eb = ve[j + 1], ed = ve[j + 2];
        const aa = cc[j], ab = cc[j + 1], ad = cc[j + 2];
        z0 = aa * x[u0 + ea] + ab * x[u0 + eb] + ad * x[u0 + ed];
        z1 = aa * x[u1 + ea] + ab * x[u1 + eb] + ad * x[u1 + ed];
        z2 = aa * x[u2 + ea] + ab * x[u2 + eb] + ad * x[u2 + ed];
      }
      const o = P * v + kb;
      qVertex[o] = (z0 + f) / (fa * x[h0 + ca] + fb * x[h0 + cb] + fd * x[h0 + cd]);
      qVertex[o + 1] = (z1 + f) / (fa * x[h1 + ca] + fb * x[h1 + cb] + fd * x[h1 + cd]);
      qVertex[o + 2] = (z2 + f) / (fa * x[h2 + ca] + fb * x[h2 + cb] + fd * x[h2 + cd]);
    }
  }
}

/**
 * Edge pass, all layers: ĥ_e = (h_c1 + h_c2)/2 (the wet cell's value on a coastline), F_e = ĥ_e u_e,
 * q_e = (q_v1 + q_v2)/2 and G_e = F_e q_e into `flux`, `qEdge`, `fluxPv` at [P·e + k]
 * (fuses edgeThickness, the thickness flux and the edge half of potentialVorticity).
 */
export function edgeFluxAndPv(
  flux: Float64Array, qEdge: Float64Array, fluxPv: Float64Array, m: Mesh, x: Float64Array, uOffset: number, nLayers: number,
  qVertex: Float64Array,
): void {
  const ne = m.nEdges;
  const nc = m.nCells;
  const ec = m.edgeCellsClamped;
  const ev = m.edgeVertices;
  const L = nLayers;
  const P = paddedLayers(L);
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = uOffset + kb * ne, u1 = uOffset + k1 * ne, u2 = uOffset + k2 * ne;
    const h0 = kb * nc, h1 = k1 * nc, h2 = k2 * nc;
    for (let e = 0; e < ne; e++) {
      const ca = ec[2 * e], cb = ec[2 * e + 1];
      const va = P * ev[2 * e] + kb, vb = P * ev[2 * e + 1] + kb;
      const o = P * e + kb;
      const F0 = 0.5 * (x[h0 + ca] + x[h0 + cb]) * x[u0 + e];
      const F1 = 0.5 * (x[h1 + ca] + x[h1 + cb]) * x[u1 + e];
      const F2 = 0.5 * (x[h2 + ca] + x[h2 + cb]) * x[u2 + e];
      const q0 = 0.5 * (qVertex[va] + qVertex[vb]);
      const q1 = 0.5 * (qVertex[va + 1] + qVertex[vb + 1]);
      const q2 = 0.5 * (qVertex[va + 2] + qVertex[vb + 2]);
      flux[o] = F0; flux[o + 1] = F1; flux[o + 2] = F2;
      qEdge[o] = q0; qEdge[o + 1] = q1; qEdge[o + 2] = q2;
      fluxPv[o] = F0 * q0; fluxPv[o + 1] = F1 * q1; fluxPv[o + 2] = F2 * q2;
    }
  }
}

/**
 * Cell pass, all layers: continuity dh_i/dt = −Σ_q (s_q l_q/A_i) F_q into `out[k·nCells + i]`, and the
 * Bernoulli function B_i = K_i + M_i with K_i = Σ_q (l_q d_q/4A_i) u_q² and the Montgomery potential
 * M_k = Σ_{j≤k} g'_j η_j, η_k = b + Σ_{j≥k} h_j, into `bernoulli[P·i + k]`
 * (fuses continuity, kineticEnergy and the Montgomery potential). `flux` is laid out as edgeFluxAndPv writes it.
 */
export function cellContinuityBernoulli(
  out: Float64Array, bernoulli: Float64Array, m: Mesh, x: Float64Array, uOffset: number, nLayers: number,
  flux: Float64Array, bottom: Float64Array, reducedGravity: Float64Array,
): void {
  const nc = m.nCells;
  const ne = m.nEdges;
  const off = m.cellEdgeOffset;
  const idx = m.cellEdgeIndex;
  const dcf = m.cellEdgeDivCoef;
  const kcf = m.cellEdgeKeCoef;
  const L = nLayers;
  const P = paddedLayers(L);
  for (let i = 0; i < nc; i++) {
    const o = P * i;
    let level = bottom[i];
    for (let k = L - 1; k >= 0; k--) {
      level += x[k * nc + i];
      bernoulli[o + k] = level;
    }
    let pot = 0;
    for (let k = 0; k < L; k++) {
      pot += reducedGravity[k] * bernoulli[o + k];
      bernoulli[o + k] = pot;
    }
    for (let k = L; k < P; k++) bernoulli[o + k] = pot;
  }
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = uOffset + kb * ne, u1 = uOffset + k1 * ne, u2 = uOffset + k2 * ne;
    for (let i = 0; i < nc; i++) {
      const q1 = off[i + 1];
      let d0 = 0, d1 = 0, d2 = 0, K0 = 0, K1 = 0, K2 = 0;
      for (let q = off[i]; q < q1; q++) {
        const e = idx[q];
        const j = P * e + kb;
        const c = dcf[q];
        const w = kcf[q];
        const a0 = x[u0 + e], a1 = x[u1 + e], a2 = x[u2 + e];
        d0 += c * flux[j]; d1 += c * flux[j + 1]; d2 += c * flux[j + 2];
        K0 += w * a0 * a0; K1 += w * a1 * a1; K2 += w * a2 * a2;
      }
      out[kb * nc + i] = -d0; out[k1 * nc + i] = -d1; out[k2 * nc + i] = -d2;
      const o = P * i + kb;
      bernoulli[o] += K0; bernoulli[o + 1] += K1; bernoulli[o + 2] += K2;
    }
  }
}

/**
 * Edge momentum pass, all layers: du_e/dt = ½ Σ_{e'} W_{e,e'} (l_{e'}/d_e) F_{e'} (q_e + q_{e'}) − (B_c2 − B_c1)/d_e
 * on open edges, 0 on coastline edges, into `out[uOffset + k·nEdges + e]` (fuses pvFlux and the Bernoulli gradient).
 * The PV flux is summed as ½ (q_e Σ c F_{e'} + Σ c G_{e'}) with G = F q from edgeFluxAndPv — the same sum
 * regrouped, measured ~25% faster in V8 than the product form. `tangentSlot[t] = P·tangentIndex[t]`.
 */
export function edgeMomentum(
  out: Float64Array, m: Mesh, uOffset: number, nLayers: number, flux: Float64Array, qEdge: Float64Array,
  fluxPv: Float64Array, bernoulli: Float64Array, tangentSlot: Int32Array,
): void {
  const ne = m.nEdges;
  const ec = m.edgeCellsClamped;
  const open = m.edgeOpen;
  const inv = m.edgeInvDistance;
  const toff = m.tangentOffset;
  const tw = m.tangentCoef;
  const L = nLayers;
  const P = paddedLayers(L);
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = uOffset + kb * ne, u1 = uOffset + k1 * ne, u2 = uOffset + k2 * ne;
    let t = toff[0];
    for (let e = 0; e < ne; e++) {
      const t1 = toff[e + 1];
      if (open[e] === 0) {
        t = t1;
        out[u0 + e] = 0; out[u1 + e] = 0; out[u2 + e] = 0;
        continue;
      }
      let a0 = 0, a1 = 0, a2 = 0, g0 = 0, g1 = 0, g2 = 0;
      for (; t < t1; t++) {
        const j = tangentSlot[t] + kb;
        const c = tw[t];
        a0 += c * flux[j]; a1 += c * flux[j + 1]; a2 += c * flux[j + 2];
        g0 += c * fluxPv[j]; g1 += c * fluxPv[j + 1]; g2 += c * fluxPv[j + 2];
      }
      const o = P * e + kb;
      const b1 = P * ec[2 * e] + kb, b2 = P * ec[2 * e + 1] + kb;
      const id = inv[e];
      out[u0 + e] = 0.5 * (qEdge[o] * a0 + g0) - (bernoulli[b2] - bernoulli[b1]) * id;
      out[u1 + e] = 0.5 * (qEdge[o + 1] * a1 + g1) - (bernoulli[b2 + 1] - bernoulli[b1 + 1]) * id;
      out[u2 + e] = 0.5 * (qEdge[o + 2] * a2 + g2) - (bernoulli[b2 + 2] - bernoulli[b1 + 2]) * id;
    }
  }
}
