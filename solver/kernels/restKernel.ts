/**
 * Host side of the rest-state operator kernel (`restOperator` in assembly/kernels.ts) for solver/model/linear.ts:
 * the same L x over padded stencils, with the coefficients interleaved by layer and the stencil indices stored as
 * absolute byte addresses of the layer-interleaved work arrays (one address serves a block of three layers).
 */
import { interleaveLanes, KernelMemoryBuilder, laneStride, padStencil } from "./wasm.js";

export interface RestKernelInput {
  nLayers: number; nCells: number; nEdges: number;
  /** Tangential stencil (CSR) and the per-layer Coriolis coefficients [k·nnz + q]. */
  tangentOffset: Int32Array; tangentIndex: Int32Array; coriolisCoef: Float64Array;
  /** Cell-edge stencil (CSR) and the per-layer continuity coefficients [k·nSlots + q]. */
  cellEdgeOffset: Int32Array; cellEdgeIndex: Int32Array; contCoef: Float64Array;
  /** 𝒢 row-major L×L, 1/d_e, the two cells of each edge (clamped), open edges. */
  coupling: Float64Array; invDistance: Float64Array; edgeCells: Int32Array; edgeOpen: Uint8Array;
}

/** out = L x as the WebAssembly kernel, or null where WebAssembly is unavailable. */
export function wasmRestOperator(a: RestKernelInput): ((out: Float64Array, x: Float64Array) => void) | null {
  const { nLayers: L, nCells: nc, nEdges: ne } = a;
  const n = L * (nc + ne), P = laneStride(L);
  const nnz = a.tangentOffset[ne], nSlots = a.cellEdgeOffset[nc];
  const layers = (c: Float64Array, per: number) => Array.from({ length: L }, (_, k) => c.subarray(k * per, (k + 1) * per));
  const b = new KernelMemoryBuilder();
  const xw = b.f64(n), ow = b.f64(n), mont = b.f64(P * nc), uI = b.f64(P * ne);
  const tangents = padStencil(a.tangentOffset, ne, (q) => uI.ptr + 8 * P * a.tangentIndex[q], layers(a.coriolisCoef, nnz));
  const cells = padStencil(a.cellEdgeOffset, nc, (q) => uI.ptr + 8 * P * a.cellEdgeIndex[q], layers(a.contCoef, nSlots));
  const ecM = Int32Array.from(a.edgeCells, (c) => mont.ptr + 8 * P * c);
  const G = b.copy(a.coupling), cor = b.copy(interleaveLanes(tangents.coefs)), cont = b.copy(interleaveLanes(cells.coefs));
  const inv = b.copy(a.invDistance), ti = b.copy(tangents.index), ci = b.copy(cells.index), ec = b.copy(ecM), open = b.copy(a.edgeOpen);
  const k = b.build();
  if (!k) return null;
  return (out, x) => {
    xw.view.set(x);
    k.restOperator(ow.ptr, xw.ptr, nc, ne, L, P, tangents.width, cells.width, G.ptr, mont.ptr, uI.ptr, cor.ptr, cont.ptr, inv.ptr, ti.ptr, ec.ptr, open.ptr, ci.ptr);
    out.set(ow.view);
  };
}
