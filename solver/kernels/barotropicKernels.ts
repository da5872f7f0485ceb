/**
 * The barotropic operators of the fast/slow split (solver/model/problem.ts) as WebAssembly kernels: the Coriolis
 * term C(ū), the surface tendency −D(Ĥ ū) and the pressure gradient −g G η, one kernel call each, with the frozen
 * column thickness Ĥ and edge PV q held in the kernel memory from `freeze` on. Each call copies its input vector
 * in and its result out. Same operation order as the TypeScript of problem.ts (transport Ĥ_e ū_e first, then the
 * stencil of solver/mesh/operators.ts or terms.ts), so the same values.
 */
import type { Mesh } from "../mesh/types.js";
import { KernelMemoryBuilder, padStencil, pairRows } from "./wasm.js";

export interface BarotropicKernels {
  /** Hold Ĥ (edges) and q (edges) for the following calls. */
  freeze(H: Float64Array, q: Float64Array): void;
  coriolis(out: Float64Array, ubar: Float64Array): void;
  surfaceTendency(out: Float64Array, ubar: Float64Array): void;
  pressure(out: Float64Array, eta: Float64Array): void;
}

/** The kernels of a mesh with reduced gravity g of the top interface, or null where WebAssembly is unavailable. */
export function barotropicKernels(m: Mesh, g: number): BarotropicKernels | null {
  const { nCells: nc, nEdges: ne } = m;
  const b = new KernelMemoryBuilder();
  const uIn = b.f64(ne), etaIn = b.f64(nc), edgeOut = b.f64(ne), cellOut = b.f64(nc), H = b.f64(ne), hq = b.f64(2 * ne);
  const slotSignLength = new Float64Array(m.cellEdgeOffset[nc]);
  for (let q = 0; q < slotSignLength.length; q++) slotSignLength[q] = m.cellEdgeSign[q] * m.edgeLength[m.cellEdgeIndex[q]];
  const cells = padStencil(m.cellEdgeOffset, nc, (q) => hq.ptr + 16 * m.cellEdgeIndex[q], [slotSignLength]);
  const tangents = padStencil(m.tangentOffset, ne, (q) => hq.ptr + 16 * m.tangentIndex[q], [m.tangentCoef]);
  const ec = b.copy(m.edgeCellsClamped.map((c) => etaIn.ptr + 8 * c)), dc = b.copy(m.edgeCellDistance), open = b.copy(m.edgeOpen);
  const area = b.copy(m.cellArea), ci = b.copy(pairRows(cells.index, nc, cells.width)), sl = b.copy(pairRows(cells.coefs[0], nc, cells.width)), ti = b.copy(pairRows(tangents.index, ne, tangents.width)), tw = b.copy(pairRows(tangents.coefs[0], ne, tangents.width));
  const k = b.build();
  if (!k) return null;
  const WC = cells.width, WT = tangents.width, negG = -g;
  /** The first n entries of a (a longer vector is read as the TypeScript loops read it). */
  const head = (a: Float64Array, n: number) => (a.length === n ? a : a.subarray(0, n));
  return {
    freeze(Hf, q) {
      H.view.set(head(Hf, ne));
      const v = hq.view;
      for (let e = 0; e < ne; e++) v[2 * e + 1] = q[e];
    },
    coriolis(out, ubar) {
      uIn.view.set(head(ubar, ne));
      k.barotropicCoriolis(edgeOut.ptr, uIn.ptr, H.ptr, hq.ptr, ne, WT, ti.ptr, tw.ptr, open.ptr);
      out.set(edgeOut.view);
    },
    surfaceTendency(out, ubar) {
      uIn.view.set(head(ubar, ne));
      k.barotropicSurface(cellOut.ptr, uIn.ptr, H.ptr, hq.ptr, nc, ne, WC, ci.ptr, sl.ptr, area.ptr);
      out.set(cellOut.view);
    },
    pressure(out, eta) {
      etaIn.view.set(head(eta, nc));
      k.barotropicPressure(edgeOut.ptr, ne, negG, ec.ptr, dc.ptr, open.ptr);
      out.set(edgeOut.view);
    },
  };
}
