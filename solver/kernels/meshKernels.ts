/**
 * The single-field mesh operators that a barotropic sub-step calls many times per step — gradient, divergence and
 * the PV flux — as WebAssembly kernels, one kernel memory per mesh (built at the first call, kept while the mesh
 * lives). The exported functions of solver/mesh/operators.ts and solver/model/terms.ts dispatch here and keep
 * their TypeScript loops for when WebAssembly is unavailable. Same operation order, so the same values.
 */
import type { Mesh } from "../mesh/types.js";
import { KernelMemoryBuilder, padStencil, pairRows } from "./wasm.js";

export interface MeshKernels {
  gradient(out: Float64Array, phi: Float64Array, outOff: number, inOff: number): void;
  divergence(out: Float64Array, flux: Float64Array, outOff: number, inOff: number): void;
  pvFlux(out: Float64Array, outOff: number, flux: Float64Array, qEdge: Float64Array): void;
}

const cache = new WeakMap<Mesh, MeshKernels | null>();

/** The kernels of a mesh, or null where WebAssembly is unavailable. */
export function meshKernels(m: Mesh): MeshKernels | null {
  let k = cache.get(m);
  if (k === undefined) {
    k = build(m);
    cache.set(m, k);
  }
  return k;
}

/** dst[0 … n) = src[off … off + n), without allocating a subarray view. */
function copyIn(dst: Float64Array, src: Float64Array, off: number, n: number): void {
  if (off === 0 && src.length === n) dst.set(src);
  else for (let i = 0; i < n; i++) dst[i] = src[off + i];
}

function build(m: Mesh): MeshKernels | null {
  const { nCells: nc, nEdges: ne } = m;
  const slotSignLength = new Float64Array(m.cellEdgeOffset[nc]);
  for (let q = 0; q < slotSignLength.length; q++) slotSignLength[q] = m.cellEdgeSign[q] * m.edgeLength[m.cellEdgeIndex[q]];
  const b = new KernelMemoryBuilder();
  const cellIn = b.f64(nc), cellOut = b.f64(nc), edgeIn = b.f64(ne), edgeIn2 = b.f64(ne), edgeOut = b.f64(ne), fq = b.f64(2 * ne);
  // stencil indices as absolute byte addresses of the input each kernel gathers from
  const cells = padStencil(m.cellEdgeOffset, nc, (q) => edgeIn.ptr + 8 * m.cellEdgeIndex[q], [slotSignLength]);
  const tangents = padStencil(m.tangentOffset, ne, (q) => fq.ptr + 16 * m.tangentIndex[q], [m.tangentCoef]);
  const ec = b.copy(m.edgeCellsClamped.map((c) => cellIn.ptr + 8 * c)), dc = b.copy(m.edgeCellDistance), open = b.copy(m.edgeOpen), area = b.copy(m.cellArea);
  const ci = b.copy(pairRows(cells.index, nc, cells.width)), sl = b.copy(pairRows(cells.coefs[0], nc, cells.width)), ti = b.copy(pairRows(tangents.index, ne, tangents.width)), tw = b.copy(pairRows(tangents.coefs[0], ne, tangents.width));
  const k = b.build();
  if (!k) return null;
  const WC = cells.width, WT = tangents.width;
  return {
    gradient(out, phi, outOff, inOff) {
      copyIn(cellIn.view, phi, inOff, nc);
      k.gradient(edgeOut.ptr, ne, ec.ptr, dc.ptr, open.ptr);
      out.set(edgeOut.view, outOff);
    },
    divergence(out, flux, outOff, inOff) {
      copyIn(edgeIn.view, flux, inOff, ne);
      k.divergence(cellOut.ptr, nc, WC, ci.ptr, sl.ptr, area.ptr);
      out.set(cellOut.view, outOff);
    },
    pvFlux(out, outOff, flux, qEdge) {
      copyIn(edgeIn.view, flux, 0, ne);
      copyIn(edgeIn2.view, qEdge, 0, ne);
      k.pvFlux(edgeOut.ptr, edgeIn.ptr, edgeIn2.ptr, fq.ptr, ne, WT, ti.ptr, tw.ptr, open.ptr);
      out.set(edgeOut.view, outOff);
    },
  };
}
