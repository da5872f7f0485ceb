/**
 * Jacobian-vector product J(x̄) v of the full TRiSK tendency F (Ringler et al. 2010; Hochbruck & Ostermann 2010), by exact
 * linearization of every term about the state x̄ (no finite-difference step to choose):
 *
 *   δĥ_e = ½(δh_c1 + δh_c2),  δF = δĥ ū + ĥ̄ δu,  δ(dh/dt) = −D δF
 *   δq_v = (δζ_v − q̄_v δh_v)/h̄_v,  δQ_e = ½ Σ_{e'} W_{e,e'} (l_{e'}/d_e) [δF_{e'}(q̄_e + q̄_{e'}) + F̄_{e'}(δq_e + δq_{e'})]
 *   δK_i = (1/2A_i) Σ_e l_e d_e ū_e δu_e,  δM_k = Σ_j 𝒢_kj δh_j,  δ(du/dt) = δQ − G(δK + δM) + …
 *   wind −τ_e δĥ_{1,e}/(ρ0 ĥ_{1,e}²), drag −r δu, viscosity ν2 ∇²δu − ν4 ∇⁴δu
 *
 * where bars are values at x̄. `setState(x̄)` re-forms the linearization (once per step for exponential
 * Rosenbrock methods) and costs about one tendency evaluation; each `apply` costs about one more.
 * Writes the same conventions as the model: zero momentum tendency on coastline edges, ζ = 0 at coastline
 * vertices (free slip), ĥ = the wet cell's value on coastline edges.
 */
import type { LinearOperator, OperatorCounters } from "../linalg/types.js";
import { layerCoupling } from "./modes.js";
import { KernelMemoryBuilder, laneStride, padStencil } from "../kernels/wasm.js";
import type { ShallowWaterModel, StateLayout } from "./shallowWater.js";

export interface JacobianOperator extends LinearOperator {
  readonly layout: StateLayout;
  /** Re-form J at the state x (copied). */
  setState(x: Float64Array): void;
  /** The state of the current linearization. */
  readonly state: Float64Array;
  /**
   * A rough size of the spectrum at the current state [1/s]: the rest bound of the local column depth plus
   * the advective rate 2√3 max|u|/d. An estimate, not a proven bound (J is not skew).
   */
  readonly spectralBound: number;
}

export function jacobianOperator(model: ShallowWaterModel): JacobianOperator {
  const m = model.mesh;
  const p = model.params;
  const layout = model.layout;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset, n } = layout;
  const nv = m.nVertices;
  const G = layerCoupling(p.reducedGravity);
  const counters: OperatorCounters = { matvecs: 0, innerProducts: 0 };

  // linearization point, per layer; in the kernel memory when the WebAssembly kernel runs (setState writes there)
  const kernel = model.kernels === "wasm" ? wasmJacobian(model, G) : null;
  const xBar = kernel ? kernel.xBar : new Float64Array(n);
  const hEdge = kernel ? kernel.hEdge : new Float64Array(L * ne); // ĥ̄
  const flux = kernel ? kernel.flux : new Float64Array(L * ne); // F̄ = ĥ̄ ū
  const hVert = kernel ? kernel.hVert : new Float64Array(L * nv); // h̄_v
  const qVert = kernel ? kernel.qVert : new Float64Array(L * nv); // q̄_v
  const qEdge = kernel ? kernel.qEdge : new Float64Array(L * ne); // q̄_e
  // work
  const dhEdge = new Float64Array(ne), dFlux = new Float64Array(ne), dVort = new Float64Array(nv);
  const dqVert = new Float64Array(nv), dqEdge = new Float64Array(ne), dK = new Float64Array(nc);
  const dM = new Float64Array(L * nc);
  const div = new Float64Array(nc), vort = new Float64Array(nv), lap = new Float64Array(ne), lap2 = new Float64Array(ne);
  let bound = 0;

  const { edgeCells: ec, edgeVertices: ev, edgeCellDistance: dc, edgeLength: len, edgeOpen } = m;
  const { cellEdgeOffset: cOff, cellEdgeIndex: cIdx, cellEdgeSign: cSgn, cellArea } = m;
  const { vertexCells: vc, vertexKiteArea: ka, vertexArea, vertexEdges: ve, vertexEdgeSign: vs, vertexInterior } = m;
  const { tangentOffset: tOff, tangentIndex: tIdx, tangentCoef: tCoef } = m;

  function edgeMean(out: Float64Array, outOff: number, h: Float64Array, hOff: number): void {
    for (let e = 0; e < ne; e++) {
      const c2 = ec[2 * e + 1];
      const h1 = h[hOff + ec[2 * e]];
      out[outOff + e] = c2 >= 0 ? 0.5 * (h1 + h[hOff + c2]) : h1;
    }
  }
  function vertexMean(out: Float64Array, outOff: number, h: Float64Array, hOff: number): void {
    for (let v = 0; v < nv; v++) {
      let s = 0;
      for (let j = 3 * v; j < 3 * v + 3; j++) if (vc[j] >= 0) s += ka[j] * h[hOff + vc[j]];
      out[outOff + v] = s / vertexArea[v];
    }
  }
  function curlOf(out: Float64Array, u: Float64Array, uOff: number): void {
    for (let v = 0; v < nv; v++) {
      if (!vertexInterior[v]) { out[v] = 0; continue; }
      let s = 0;
      for (let j = 3 * v; j < 3 * v + 3; j++) s += vs[j] * dc[ve[j]] * u[uOff + ve[j]];
      out[v] = s / vertexArea[v];
    }
  }
  /** (∇²u)_e = (G D u)_e − (ζ_v2 − ζ_v1)/l_e, zero on coastline edges. */
  function laplacian(out: Float64Array, u: Float64Array, uOff: number): void {
    for (let i = 0; i < nc; i++) {
      let s = 0;
      for (let q = cOff[i]; q < cOff[i + 1]; q++) s += cSgn[q] * len[cIdx[q]] * u[uOff + cIdx[q]];
      div[i] = s / cellArea[i];
    }
    curlOf(vort, u, uOff);
    for (let e = 0; e < ne; e++) {
      out[e] = edgeOpen[e] ? (div[ec[2 * e + 1]] - div[ec[2 * e]]) / dc[e] - (vort[ev[2 * e + 1]] - vort[ev[2 * e]]) / len[e] : 0;
    }
  }

  function setState(x: Float64Array): void {
    xBar.set(x);
    let maxU = 0, maxDepth = 0;
    for (let k = 0; k < L; k++) {
      const hOff = k * nc, uOff = uOffset + k * ne;
      edgeMean(hEdge, k * ne, x, hOff);
      for (let e = 0; e < ne; e++) {
        flux[k * ne + e] = hEdge[k * ne + e] * x[uOff + e];
        maxU = Math.max(maxU, Math.abs(x[uOff + e]));
      }
      vertexMean(hVert, k * nv, x, hOff);
      curlOf(vort, x, uOff);
      for (let v = 0; v < nv; v++) qVert[k * nv + v] = (vort[v] + p.coriolisVertex[v]) / hVert[k * nv + v];
      for (let e = 0; e < ne; e++) qEdge[k * ne + e] = 0.5 * (qVert[k * nv + ev[2 * e]] + qVert[k * nv + ev[2 * e + 1]]);
    }
    kernel?.prepare();
    for (let i = 0; i < nc; i++) {
      let s = 0;
      for (let k = 0; k < L; k++) s += x[k * nc + i];
      maxDepth = Math.max(maxDepth, s);
    }
    let fMax = 0;
    for (let v = 0; v < nv; v++) fMax = Math.max(fMax, Math.abs(p.coriolisVertex[v]));
    const c = Math.sqrt(p.reducedGravity[0] * maxDepth);
    bound = Math.sqrt(fMax * fMax + (6 * c * c) / (m.spacing * m.spacing)) * 1.05 + (2 * Math.sqrt(3) * maxU) / m.spacing;
  }

  function apply(out: Float64Array, x: Float64Array): void {
    counters.matvecs++;
    if (kernel) {
      kernel.apply(out, x);
      forcingAndDissipation(out, x);
      return;
    }
    // δM_k = Σ_j 𝒢_kj δh_j
    for (let i = 0; i < nc; i++) {
      for (let k = 0; k < L; k++) {
        let s = 0;
        for (let j = 0; j < L; j++) s += G[k * L + j] * x[j * nc + i];
        dM[k * nc + i] = s;
      }
    }
    for (let k = 0; k < L; k++) {
      const hOff = k * nc, uOff = uOffset + k * ne, eOff = k * ne, vOff = k * nv;
      // δF = δĥ ū + ĥ̄ δu
      edgeMean(dhEdge, 0, x, hOff);
      for (let e = 0; e < ne; e++) dFlux[e] = dhEdge[e] * xBar[uOff + e] + hEdge[eOff + e] * x[uOff + e];
      // continuity
      for (let i = 0; i < nc; i++) {
        let s = 0;
        for (let q = cOff[i]; q < cOff[i + 1]; q++) s += cSgn[q] * len[cIdx[q]] * dFlux[cIdx[q]];
        out[hOff + i] = -s / cellArea[i];
      }
      // δq_v = (δζ_v − q̄_v δh_v)/h̄_v
      curlOf(dVort, x, uOff);
      vertexMean(dqVert, 0, x, hOff);
      for (let v = 0; v < nv; v++) dqVert[v] = (dVort[v] - qVert[vOff + v] * dqVert[v]) / hVert[vOff + v];
      for (let e = 0; e < ne; e++) dqEdge[e] = 0.5 * (dqVert[ev[2 * e]] + dqVert[ev[2 * e + 1]]);
      // δK_i = (1/2A_i) Σ l_e d_e ū_e δu_e
      for (let i = 0; i < nc; i++) {
        let s = 0;
        for (let q = cOff[i]; q < cOff[i + 1]; q++) {
          const e = cIdx[q];
          s += len[e] * dc[e] * xBar[uOff + e] * x[uOff + e];
        }
        dK[i] = (0.5 * s) / cellArea[i];
      }
      // momentum
      for (let e = 0; e < ne; e++) {
        if (!edgeOpen[e]) { out[uOff + e] = 0; continue; }
        const qe = qEdge[eOff + e], dqe = dqEdge[e];
        let acc = 0;
        for (let q = tOff[e]; q < tOff[e + 1]; q++) {
          const e2 = tIdx[q];
          acc += tCoef[q] * (dFlux[e2] * (qe + qEdge[eOff + e2]) + flux[eOff + e2] * (dqe + dqEdge[e2]));
        }
        const c1 = ec[2 * e], c2 = ec[2 * e + 1];
        out[uOff + e] = 0.5 * acc - (dK[c2] + dM[hOff + c2] - dK[c1] - dM[hOff + c1]) / dc[e];
      }
      layerForcing(out, x, k);
    }
  }

  /** Wind (top layer; reads δĥ of layer 0 from dhEdge), drag (bottom layer) and viscosity added to layer k. */
  function layerForcing(out: Float64Array, x: Float64Array, k: number): void {
    const uOff = uOffset + k * ne, eOff = k * ne;
    if (k === 0 && p.windStress) {
      const tau = p.windStress;
      for (let e = 0; e < ne; e++) {
        if (edgeOpen[e]) out[uOff + e] -= (tau[e] * dhEdge[e]) / (p.rho0 * hEdge[eOff + e] * hEdge[eOff + e]);
      }
    }
    if (k === L - 1 && p.bottomDrag > 0) for (let e = 0; e < ne; e++) out[uOff + e] -= p.bottomDrag * x[uOff + e];
    if (p.viscosity > 0 || p.biharmonic > 0) {
      laplacian(lap, x, uOff);
      if (p.viscosity > 0) for (let e = 0; e < ne; e++) out[uOff + e] += p.viscosity * lap[e];
      if (p.biharmonic > 0) {
        laplacian(lap2, lap, 0);
        for (let e = 0; e < ne; e++) out[uOff + e] -= p.biharmonic * lap2[e];
      }
    }
  }
  /** After the kernel: the same per-layer additions, in the same order per entry. */
  function forcingAndDissipation(out: Float64Array, x: Float64Array): void {
    if (p.windStress) edgeMean(dhEdge, 0, x, 0);
    for (let k = 0; k < L; k++) layerForcing(out, x, k);
  }

  setState(model.restState());
  return {
    n, layout, counters, state: xBar, setState, apply,
    get spectralBound() { return bound; },
  };
}

/**
 * The inviscid, unforced part of `apply` as a WebAssembly kernel (`jacobianApply`, same operation order), with
 * the linearization-point arrays in its memory so that setState fills them in place. Null where WebAssembly is
 * unavailable.
 */
function wasmJacobian(model: ShallowWaterModel, coupling: Float64Array) {
  const m = model.mesh;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset, n } = model.layout;
  const nv = m.nVertices;
  const slotSignLength = new Float64Array(m.cellEdgeOffset[nc]), slotLengthDistance = new Float64Array(m.cellEdgeOffset[nc]);
  for (let q = 0; q < slotSignLength.length; q++) {
    const e = m.cellEdgeIndex[q];
    slotSignLength[q] = m.cellEdgeSign[q] * m.edgeLength[e];
    slotLengthDistance[q] = m.edgeLength[e] * m.edgeCellDistance[e];
  }
  const vertexSignDistance = m.vertexEdgeSign.map((s, j) => s * m.edgeCellDistance[m.vertexEdges[j]]);
  // stencil indices: byte offsets of an entity's lane 0 in the layer-interleaved arrays (8P × entity)
  const P = laneStride(L), at = (i: number) => 8 * P * i;
  const cells = padStencil(m.cellEdgeOffset, nc, (q) => at(m.cellEdgeIndex[q]), [slotSignLength, slotLengthDistance]);
  const tangents = padStencil(m.tangentOffset, ne, (q) => at(m.tangentIndex[q]), [m.tangentCoef]);
  const b = new KernelMemoryBuilder();
  const xw = b.f64(n), ow = b.f64(n);
  const xBar = b.f64(n), hEdge = b.f64(L * ne), flux = b.f64(L * ne), hVert = b.f64(L * nv), qVert = b.f64(L * nv), qEdge = b.f64(L * ne);
  const [hI, dM, dK] = [0, 1, 2].map(() => b.f64(P * nc));
  const [uI, dF, dqE, ubI, hEI, fI, qEI] = [0, 1, 2, 3, 4, 5, 6].map(() => b.f64(P * ne));
  const [dqV, hVI, qVI] = [0, 1, 2].map(() => b.f64(P * nv));
  const G = b.copy(coupling), ec = b.copy(m.edgeCellsClamped.map(at)), ev = b.copy(m.edgeVertices.map(at)), open = b.copy(m.edgeOpen);
  const dc = b.copy(m.edgeCellDistance), area = b.copy(m.cellArea);
  const ci = b.copy(cells.index), sl = b.copy(cells.coefs[0]), lk = b.copy(cells.coefs[1]);
  const ve = b.copy(m.vertexEdges.map(at)), vsd = b.copy(vertexSignDistance), vc = b.copy(m.vertexCellsClamped.map(at)), ka = b.copy(m.vertexKiteArea);
  const vArea = b.copy(m.vertexArea), vi = b.copy(m.vertexInterior), ti = b.copy(tangents.index), tw = b.copy(tangents.coefs[0]);
  const k = b.build();
  if (!k) return null;
  const WC = cells.width, WT = tangents.width;
  return {
    xBar: xBar.view, hEdge: hEdge.view, flux: flux.view, hVert: hVert.view, qVert: qVert.view, qEdge: qEdge.view,
    /** After setState filled the layer-major arrays above: their layer-interleaved copies for the kernel. */
    prepare(): void {
      k.jacobianPrepare(ne, nv, L, P, uOffset, xBar.ptr, hEdge.ptr, flux.ptr, hVert.ptr, qVert.ptr, qEdge.ptr, ubI.ptr, hEI.ptr, fI.ptr, qEI.ptr, hVI.ptr, qVI.ptr);
    },
    apply(out: Float64Array, x: Float64Array): void {
      xw.view.set(x);
      k.jacobianApply(ow.ptr, xw.ptr, nc, ne, nv, L, P, WC, WT, G.ptr, hI.ptr, uI.ptr, dM.ptr, dF.ptr, dK.ptr, dqV.ptr, dqE.ptr,
        ubI.ptr, hEI.ptr, fI.ptr, qEI.ptr, hVI.ptr, qVI.ptr, ec.ptr, ev.ptr, open.ptr, dc.ptr, area.ptr, ci.ptr, sl.ptr, lk.ptr,
        ve.ptr, vsd.ptr, vc.ptr, ka.ptr, vArea.ptr, vi.ptr, ti.ptr, tw.ptr);
      out.set(ow.view);
    },
  };
}
