/**
 * Host side of the sparse LU substitution kernel (`blockLuSolve` in assembly/kernels.ts) for the shifted solves of
 * solver/model/shiftedSolve.ts: one kernel memory per factorization holding its factors, the ordering and the
 * vectors; a solve copies the right-hand side in and the solution out. Blocks of 1–3 unknowns per node; other
 * sizes, or no WebAssembly, keep the TypeScript substitution (same operations, same order, same values).
 */
import type { BlockLu } from "../linalg/sparseLu.js";
import { KernelMemoryBuilder } from "./wasm.js";

/**
 * out = A⁻¹ c for the factors `f` of A in the order `perm` (entry q of the factor's order is entry perm[q] of the
 * caller's vectors), or null where the kernel cannot take it. `out` and `c` may alias.
 */
export function wasmBlockLuSolver(f: BlockLu, perm: Int32Array): ((out: Float64Array, c: Float64Array) => void) | null {
  if (f.b < 1 || f.b > 3) return null;
  const n = f.nNodes * f.b;
  const b = new KernelMemoryBuilder();
  const cw = b.f64(n), yw = b.f64(n), ow = b.f64(n);
  const pm = b.copy(perm), cp = b.copy(f.lColPtr), ix = b.copy(f.index), lo = b.copy(f.lower), up = b.copy(f.upper), di = b.copy(f.pivotInverse);
  const k = b.build();
  if (!k) return null;
  return (out, c) => {
    cw.view.set(c);
    k.blockLuSolve(ow.ptr, cw.ptr, yw.ptr, pm.ptr, f.nNodes, f.b, cp.ptr, ix.ptr, lo.ptr, up.ptr, di.ptr);
    out.set(ow.view);
  };
}
