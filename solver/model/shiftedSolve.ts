/**
 * Shifted solves (I − γK) y = c for the fixed linear wave operators, by a sparse direct factorization computed
 * once per (operator, γ) and reused: the cost of a solve does not grow with γρ.
 *
 * The operator is read into a sparse matrix by probing: the unknowns sit on mesh nodes (cells and edges, one per
 * layer or mode), every entry of K couples a node with itself or a neighbour (a cell with its edges, an edge with
 * its two cells and its tangential stencil), so products with the sums of unit vectors of a distance-2 colouring
 * of that graph give every entry exactly (Curtis, Powell & Reid 1974). The matrix is then ordered by nested
 * dissection and factored by `sparseLu.ts` without pivoting (see there why that is safe for I − γK with K
 * skew-adjoint in a diagonal inner product).
 *
 * Complex shifts (σI − K) x = r, for the poles of the rational φ backend, use the same probed matrix and ordering:
 * a complex LU (complex b×b blocks for b components per node), one factorization per σ, kept up to
 * a memory bound that `reserve` checks for a whole set of poles before any is factored.
 *
 * Cost is counted in matrix-vector-product equivalents of K (multiply-adds of the work / multiply-adds of one
 * product), added to the operator's own counter.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator } from "../linalg/types.js";
import {
  blockLuSolveInPlace, blockLuWork, blockPattern, blockPatternTransposeSlot, complexBlockLuSolveInPlace, complexBlockLuWork,
  complexLuSolveInPlace, complexLuWork, distance2Colouring, nestedDissection, numericBlockLu, numericComplexBlockLu, numericComplexLu,
  symbolicBlockLu, symmetricGraph, type BlockLu, type BlockPattern, type ComplexBlockLu, type ComplexBlockLuWork, type ComplexLu,
  type ComplexLuWork, type NodeGraph, type SymbolicLu,
} from "../linalg/sparseLu.js";
import type { Mesh } from "../mesh/types.js";
import { wasmBlockLuSolver } from "../kernels/luKernel.js";

export interface ShiftedSolveStats {
  /** Unknowns of the factored system. */
  readonly unknowns: number;
  /** Colours of the probing (products with K to read it: colours × components). */
  readonly probeProducts: number;
  /** Entries of the strictly lower factor (as many in the upper one). */
  readonly fill: number;
  /** Factorizations done (one per distinct γ, unless evicted from the cache). */
  factorizations: number;
  /** Solves done. */
  solves: number;
  /** Cost of one solve (forward and backward substitution) in products with K. */
  readonly matvecsPerSolve: number;
  /** Cost of one factorization in products with K. */
  readonly matvecsPerFactorization: number;
}

export interface ShiftedSolverOptions {
  /** Field named in refusals (default "stepper.linear"). */
  field?: string;
  /** Largest nnz(L) (default 2e7, about 400 MB for L and U). */
  maxFill?: number;
  /** Largest multiply-adds of one factorization (default 5e10, a minute or two). */
  maxWork?: number;
  /** Factorizations kept for distinct γ (default 4; the least recently used is dropped). */
  cacheSize?: number;
  /**
   * Complex shifts: largest total of stored factor numbers over the kept complex factorizations, counted as real
   * numbers of the lower factor (the upper one holds as many): default 1e8, about 1.6 GB for both.
   */
  maxComplexFill?: number;
  /** Complex shifts: largest multiply-adds of the factorizations one `reserve` may ask for (default 2e11). */
  maxComplexWork?: number;
}

export interface ComplexShiftedSolveStats {
  /** Real numbers of the lower factor of one complex factorization (the upper one holds as many). */
  readonly fillPerFactorization: number;
  /** Complex factorizations kept at most (the memory bound over the fill of one). */
  readonly capacity: number;
  factorizations: number;
  solves: number;
  /** Cost of one complex solve in products with K (real multiply-adds / those of one product). */
  readonly matvecsPerSolve: number;
  readonly matvecsPerFactorization: number;
  /** Largest element growth max|U|/max|A| over the factorizations done (no pivoting; see sparseLu.ts). */
  largestGrowth: number;
}

/**
 * Solver for (σI − K) x = r with complex σ, one factorization per σ, cached (least recently used dropped beyond
 * `capacity`). Single-component operators use a scalar complex LU, several components a complex block LU.
 */
export interface ComplexShiftedSolver {
  /**
   * Refuses, with one line naming the field, when `count` complex factorizations would not fit the memory bound
   * or would exceed the work bound (call before a set of solves with `count` distinct shifts).
   */
  reserve(count: number, what?: string): void;
  /** x = (σI − K)⁻¹ r, σ = sr + i·si; x may alias r. */
  solve(xRe: Float64Array, xIm: Float64Array, rRe: Float64Array, rIm: Float64Array, sr: number, si: number): void;
  readonly stats: ComplexShiftedSolveStats;
}

/** Solver for (I − γK) y = c with K the given operator in its own variables. */
export interface OperatorShiftedSolver {
  /** y = (I − γK)⁻¹ c; y and c may alias. */
  solve(y: Float64Array, c: Float64Array, gamma: number): void;
  readonly stats: ShiftedSolveStats;
  /** The complex shifted solves on the same ordering and probed matrix. */
  readonly complex: ComplexShiftedSolver;
}

/** The node graph of the wave operators: cells 0..nCells−1, edges nCells..nCells+nEdges−1. */
export function waveOperatorGraph(mesh: Mesh): NodeGraph {
  const nc = mesh.nCells, ne = mesh.nEdges;
  return symmetricGraph(nc + ne, (add) => {
    for (let i = 0; i < nc; i++) for (let q = mesh.cellEdgeOffset[i]; q < mesh.cellEdgeOffset[i + 1]; q++) add(i, nc + mesh.cellEdgeIndex[q]);
    for (let e = 0; e < ne; e++) {
      for (let s = 0; s < 2; s++) { const c = mesh.edgeCells[2 * e + s]; if (c >= 0) add(nc + e, c); }
      for (let q = mesh.tangentOffset[e]; q < mesh.tangentOffset[e + 1]; q++) add(nc + e, nc + mesh.tangentIndex[q]);
    }
  });
}

/**
 * A shifted solver for operator K on vectors laid out like a state with `nComp` layers on `mesh`
 * (x[c·nCells + i] at cells, x[nComp·nCells + c·nEdges + e] at edges). `multiplyAddsPerMatvec` converts the
 * work into products with K.
 */
export function operatorShiftedSolver(
  op: LinearOperator, mesh: Mesh, nComp: number, multiplyAddsPerMatvec: number, opts: ShiftedSolverOptions = {},
): OperatorShiftedSolver {
  const field = opts.field ?? "stepper.linear";
  const nc = mesh.nCells, ne = mesh.nEdges, uOffset = nComp * nc;
  const n = nComp * (nc + ne);
  if (op.n !== n) throw new SolverError("bad-input", `${field}: operator length ${op.n} does not match ${nComp} components on the mesh (${n})`, field);
  const cacheSize = Math.max(1, opts.cacheSize ?? 4);
  const limits = { maxFill: opts.maxFill ?? 2e7, maxWork: opts.maxWork ?? 5e10, field };

  let pattern: BlockPattern | undefined, sym: SymbolicLu | undefined, kValues: Float64Array | undefined;
  let work: ReturnType<typeof blockLuWork> | undefined;
  let aValues: Float64Array | undefined, diagSlot: Uint8Array | undefined;
  let probeProducts = 0;
  const cache: { gamma: number; f: BlockLu }[] = [];
  /** The WebAssembly substitution of each cached factorization (null: the TypeScript one). */
  const kernels = new WeakMap<BlockLu, ((out: Float64Array, c: Float64Array) => void) | null>();
  /** Entry q of the factor's order is entry gather[q] of the caller's vectors (set with the pattern). */
  let gather: Int32Array | undefined;
  const perm = new Float64Array(n), blockTmp = new Float64Array(nComp);
  const bb = nComp * nComp;
  /** Original index of the unknown (node, component). */
  const orig = (node: number, c: number) => (node < nc ? c * nc + node : uOffset + c * ne + (node - nc));

  function setup(): void {
    const g = waveOperatorGraph(mesh);
    const order = nestedDissection(g);
    const pat = blockPattern(g, order, nComp);
    const s = symbolicBlockLu(pat, limits); // refuses before any heavy work
    // probe K: one product per colour and component reads the columns of every node of that colour
    const { colour, count } = distance2Colouring(g);
    const classes: number[][] = Array.from({ length: count }, () => []);
    for (let v = 0; v < g.nNodes; v++) classes[colour[v]].push(v);
    const kv = new Float64Array(pat.blockIndex.length * bb);
    const v = new Float64Array(n), y = new Float64Array(n);
    for (let c = 0; c < nComp; c++) {
      for (const cls of classes) {
        v.fill(0);
        for (const node of cls) v[orig(node, c)] = 1;
        op.apply(y, v);
        probeProducts++;
        for (const node of cls) {
          const P = pat.position[node];
          for (let q = pat.blockOffset[P]; q < pat.blockOffset[P + 1]; q++) {
            const rowNode = pat.order[pat.blockIndex[q]];
            for (let d = 0; d < nComp; d++) kv[q * bb + d * nComp + c] = y[orig(rowNode, d)];
          }
        }
      }
    }
    const diag = new Uint8Array(kv.length);
    for (let P = 0; P < order.length; P++) {
      for (let q = pat.blockOffset[P]; q < pat.blockOffset[P + 1]; q++) {
        if (pat.blockIndex[q] === P) for (let d = 0; d < nComp; d++) diag[q * bb + d * nComp + d] = 1;
      }
    }
    pattern = pat; sym = s; kValues = kv; diagSlot = diag;
    gather = new Int32Array(n);
    for (let P = 0; P < pat.order.length; P++) for (let d = 0; d < nComp; d++) gather[P * nComp + d] = orig(pat.order[P], d);
    work = blockLuWork(order.length, nComp);
    aValues = new Float64Array(kv.length);
    stats.unknowns = pat.n;
    stats.fill = s.nnzL * bb;
    stats.probeProducts = probeProducts;
    stats.matvecsPerSolve = (2 * s.nnzL * bb + order.length * bb) / multiplyAddsPerMatvec;
    stats.matvecsPerFactorization = s.factorMultiplyAdds / multiplyAddsPerMatvec;
  }

  function factorFor(gamma: number): BlockLu {
    for (let i = 0; i < cache.length; i++) {
      if (cache[i].gamma === gamma) {
        const hit = cache[i];
        if (i !== cache.length - 1) { cache.splice(i, 1); cache.push(hit); }
        return hit.f;
      }
    }
    if (!pattern) setup();
    const kv = kValues!, av = aValues!, dg = diagSlot!;
    for (let p = 0; p < kv.length; p++) av[p] = dg[p] - gamma * kv[p];
    const reuse = cache.length >= cacheSize ? cache.shift()!.f : undefined;
    const f = numericBlockLu(pattern!, sym!, av, work!, reuse);
    cache.push({ gamma, f });
    stats.factorizations++;
    op.counters.matvecs += stats.matvecsPerFactorization;
    return f;
  }

  const stats: { -readonly [K in keyof ShiftedSolveStats]: ShiftedSolveStats[K] } = {
    unknowns: n, probeProducts: 0, fill: 0, factorizations: 0, solves: 0, matvecsPerSolve: NaN, matvecsPerFactorization: NaN,
  };

  // complex shifts ------------------------------------------------------------------------------------------
  const maxComplexFill = opts.maxComplexFill ?? 1e8, maxComplexWork = opts.maxComplexWork ?? 2e11;
  const cStats: { -readonly [K in keyof ComplexShiftedSolveStats]: ComplexShiftedSolveStats[K] } = {
    fillPerFactorization: NaN, capacity: 0, factorizations: 0, solves: 0, matvecsPerSolve: NaN, matvecsPerFactorization: NaN, largestGrowth: 0,
  };
  let cWork: ComplexLuWork | undefined, cIndex: Int32Array | undefined, cTs: Int32Array | undefined;
  let cRe: Float64Array | undefined, cIm: Float64Array | undefined; // values of σI − K on the block pattern
  let cbWork: ComplexBlockLuWork | undefined; // b > 1
  let factorWork = NaN;
  const cCache: { sr: number; si: number; f: ComplexLu | ComplexBlockLu; used: number }[] = [];
  let clock = 0;
  const permRe = new Float64Array(n), permIm = new Float64Array(n), tmp2 = new Float64Array(2 * nComp);

  function complexSetup(): void {
    if (!pattern) setup();
    const pat = pattern!, s = sym!;
    // s.nnzL counts node blocks (b² numbers each), s.factorMultiplyAdds real ones: a complex multiply-add is 4
    cStats.fillPerFactorization = 2 * s.nnzL * bb;
    factorWork = 4 * s.factorMultiplyAdds;
    cStats.matvecsPerSolve = (4 * (2 * s.nnzL * bb + pat.order.length * bb)) / multiplyAddsPerMatvec;
    cStats.matvecsPerFactorization = factorWork / multiplyAddsPerMatvec;
    cStats.capacity = Math.max(0, Math.floor(maxComplexFill / cStats.fillPerFactorization));
  }

  function complexFactor(sr: number, si: number): ComplexLu | ComplexBlockLu {
    clock++;
    for (let i = cCache.length - 1; i >= 0; i--) {
      const e = cCache[i];
      if (e.sr === sr && e.si === si) { e.used = clock; return e.f; }
    }
    if (!(cStats.capacity >= 1)) complexSetup();
    if (cStats.capacity < 1) complexRefuse(1, "a complex shifted solve");
    const pat = pattern!, kv = kValues!, dg = diagSlot!;
    // beyond capacity the least recently used factorization gives its arrays to the new one
    let slot = -1;
    if (cCache.length >= cStats.capacity) {
      slot = 0;
      for (let i = 1; i < cCache.length; i++) if (cCache[i].used < cCache[slot].used) slot = i;
    }
    const evicted = slot >= 0 ? cCache[slot].f : undefined;
    if (slot >= 0) cCache[slot].sr = NaN; // overwritten below: never matched, even if the factorization fails
    let f: ComplexLu | ComplexBlockLu;
    cRe ??= new Float64Array(kv.length); cIm ??= new Float64Array(kv.length);
    for (let p = 0; p < kv.length; p++) { cRe[p] = sr * dg[p] - kv[p]; cIm[p] = si * dg[p]; }
    if (nComp === 1) {
      cWork ??= complexLuWork(pat.n);
      cTs ??= blockPatternTransposeSlot(pat);
      cIndex ??= new Int32Array(sym!.nnzL);
      f = numericComplexLu(
        { n: pat.n, colPtr: pat.blockOffset, rowIdx: pat.blockIndex, transposeSlot: cTs }, sym!, cRe, cIm, cWork, cIndex,
        evicted as ComplexLu | undefined,
      );
    } else {
      cbWork ??= complexBlockLuWork(pat.order.length, nComp);
      cIndex ??= new Int32Array(sym!.nnzL);
      f = numericComplexBlockLu(pat, sym!, cRe, cIm, cbWork, cIndex, evicted as ComplexBlockLu | undefined);
    }
    cStats.largestGrowth = Math.max(cStats.largestGrowth, f.growth);
    if (slot >= 0) { const e = cCache[slot]; e.sr = sr; e.si = si; e.f = f; e.used = clock; } else cCache.push({ sr, si, f, used: clock });
    cStats.factorizations++;
    op.counters.matvecs += cStats.matvecsPerFactorization;
    return f;
  }

  function complexRefuse(count: number, what: string): never {
    const fill = count * cStats.fillPerFactorization;
    throw new SolverError("bad-input", `${field}: ${what} needs ${count} complex factorizations holding ${fill.toExponential(2)} factor entries, more than the bound ${maxComplexFill.toExponential(2)}; use a smaller Δt·ρ, a smaller mesh or another backend`, field);
  }

  const complex: ComplexShiftedSolver = {
    stats: cStats,
    reserve(count, what = "the contour") {
      if (!(cStats.capacity >= 1)) complexSetup();
      if (count * cStats.fillPerFactorization > maxComplexFill) complexRefuse(count, what);
      const w = count * factorWork;
      if (w > maxComplexWork) {
        throw new SolverError("bad-input", `${field}: ${what} needs ${count} complex factorizations taking ${w.toExponential(2)} multiply-adds, more than the bound ${maxComplexWork.toExponential(2)}; use a smaller Δt·ρ, a smaller mesh or another backend`, field);
      }
    },
    solve(xRe, xIm, rRe, rIm, sr, si) {
      if (!Number.isFinite(sr) || !Number.isFinite(si)) throw new SolverError("bad-input", `${field}: complex shift ${sr} + ${si}i must be finite`, field);
      const f = complexFactor(sr, si);
      const g = gather!;
      for (let q = 0; q < n; q++) { permRe[q] = rRe[g[q]]; permIm[q] = rIm[g[q]]; }
      if (nComp === 1) complexLuSolveInPlace(f as ComplexLu, permRe, permIm);
      else complexBlockLuSolveInPlace(f as ComplexBlockLu, permRe, permIm, tmp2);
      for (let q = 0; q < n; q++) { xRe[g[q]] = permRe[q]; xIm[g[q]] = permIm[q]; }
      cStats.solves++;
      op.counters.matvecs += cStats.matvecsPerSolve;
    },
  };

  return {
    stats,
    complex,
    solve(y, c, gamma) {
      if (!Number.isFinite(gamma)) throw new SolverError("bad-input", `${field}: shift γ = ${gamma} must be finite`, field);
      const f = factorFor(gamma);
      const g = gather!;
      let kernel = kernels.get(f);
      if (kernel === undefined) {
        kernel = wasmBlockLuSolver(f, g);
        kernels.set(f, kernel);
      }
      if (kernel) {
        kernel(y, c);
      } else {
        for (let q = 0; q < n; q++) perm[q] = c[g[q]];
        blockLuSolveInPlace(f, perm, blockTmp);
        for (let q = 0; q < n; q++) y[g[q]] = perm[q];
      }
      stats.solves++;
      op.counters.matvecs += stats.matvecsPerSolve;
    },
  };
}
