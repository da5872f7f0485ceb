/**
 * Sparse direct LU for matrices with a symmetric nonzero pattern, without pivoting, after a nested-dissection
 * ordering of a graph of "nodes" that each carry a dense block of unknowns (mesh cells and edges with one
 * unknown per layer or mode).
 *
 * Why no pivoting: the matrices factored here are I − γK with K skew-adjoint in a diagonally weighted inner
 * product (the linear wave operator). A diagonal similarity D (I − γK) D⁻¹ has the same LU pivots, and there the
 * symmetric part is I, positive definite; every leading principal submatrix of a matrix with positive definite
 * symmetric part is nonsingular, so LU without pivoting exists (Golub & Van Loan, Matrix Computations, 4th ed.
 * 2013, §4.4), with element growth bounded in terms of the skew part (ibid.). A symmetric
 * permutation keeps that property, so any fill-reducing ordering may be used.
 *
 * Complex shifts σI − K (the poles of the rational φ backend): K skew-adjoint in the weights has its field of
 * values on the segment [−iρ, iρ], so that of σI − K is the vertical segment σ − [−iρ, iρ], at a distance
 * δ(σ) > 0 from 0 whenever σ is off the segment. A unimodular rotation e^{−iψ}(σI − K) then has Hermitian part
 * ≥ δ I (after the diagonal similarity), so LU without pivoting exists (same argument), the pivots being those of
 * the rotated matrix times e^{iψ}; the element growth is bounded in terms of ‖K‖/δ (Golub & Van Loan,
 * "Unsymmetric positive definite linear systems", Linear Algebra Appl. 28, 1979, 85–97; bound from memory).
 * δ is smallest for poles near Re σ = 0 just beyond the ends ±iρ, so the callers measure the growth (ComplexLu
 * `growth`) and check residuals. The complex factorizations below are `numericLu` and `numericBlockLu` in
 * complex arithmetic (half the memory and flops of the real 2×2-block form of the same system).
 *
 * Algorithm: elimination tree and row patterns by the up-looking method of Davis (Direct Methods for Sparse
 * Linear Systems, SIAM 2006, ch. 4: etree, ereach, up-looking Cholesky), here with two value sets — the
 * strictly lower part L (unit diagonal, stored by columns) and the strictly upper part U (stored by rows, same
 * index pattern) — and the pivots D = diag(U). Ordering: nested dissection with breadth-first level-set
 * separators from a pseudo-peripheral node (George 1973, SIAM J. Numer. Anal. 10, 345–363; George & Liu,
 * Computer Solution of Large Sparse Positive Definite Systems, 1981, ch. 8).
 *
 * Work is bounded before it starts: the symbolic pass counts the fill and the multiply-adds and refuses above
 * the given limits.
 */
import { SolverError } from "../errors.js";

/** A symmetric graph in CSR form without self loops. */
export interface NodeGraph {
  readonly nNodes: number;
  readonly offset: Int32Array;
  readonly index: Int32Array;
}

/** Build a symmetric graph from (possibly one-sided, possibly repeated) pairs. */
export function symmetricGraph(nNodes: number, pairs: (add: (a: number, b: number) => void) => void): NodeGraph {
  const deg = new Int32Array(nNodes);
  pairs((a, b) => { if (a !== b) { deg[a]++; deg[b]++; } });
  const offset = new Int32Array(nNodes + 1);
  for (let i = 0; i < nNodes; i++) offset[i + 1] = offset[i] + deg[i];
  const raw = new Int32Array(offset[nNodes]);
  const next = offset.slice(0, nNodes);
  pairs((a, b) => { if (a !== b) { raw[next[a]++] = b; raw[next[b]++] = a; } });
  // sort and deduplicate each list
  const off2 = new Int32Array(nNodes + 1);
  const out: number[] = [];
  for (let i = 0; i < nNodes; i++) {
    const list = Array.from(raw.subarray(offset[i], offset[i + 1])).sort((x, y) => x - y);
    let last = -1;
    for (const j of list) if (j !== last) { out.push(j); last = j; }
    off2[i + 1] = out.length;
  }
  return { nNodes, offset: off2, index: Int32Array.from(out) };
}

/**
 * Nested-dissection order of the graph's nodes: order[position] = node. Each piece larger than `leafSize` is
 * split by the breadth-first level (from a pseudo-peripheral node) of smallest size near the middle; both
 * sides are ordered first, the separator last. Disconnected pieces are ordered one after the other.
 */
export function nestedDissection(g: NodeGraph, leafSize = 16): Int32Array {
  const n = g.nNodes, off = g.offset, idx = g.index;
  const order = new Int32Array(n);
  let filled = 0;
  const member = new Int32Array(n).fill(-1); // id of the piece a node currently belongs to
  const seen = new Int32Array(n).fill(-1);
  const depth = new Int32Array(n);
  const queue = new Int32Array(n);
  let pieceId = 0, bfsId = 0;

  /** BFS from `start` over nodes with member === id; fills queue[0..count) and depth; returns count and levels. */
  function bfs(start: number, id: number): { count: number; levels: number } {
    const mark = bfsId++;
    let head = 0, tail = 0;
    queue[tail++] = start; seen[start] = mark; depth[start] = 0;
    let levels = 1;
    while (head < tail) {
      const v = queue[head++];
      for (let p = off[v]; p < off[v + 1]; p++) {
        const w = idx[p];
        if (member[w] !== id || seen[w] === mark) continue;
        seen[w] = mark; depth[w] = depth[v] + 1;
        if (depth[w] + 1 > levels) levels = depth[w] + 1;
        queue[tail++] = w;
      }
    }
    return { count: tail, levels };
  }

  function emit(nodes: ArrayLike<number>): void {
    for (let i = 0; i < nodes.length; i++) order[filled++] = nodes[i];
  }

  function dissect(nodes: Int32Array): void {
    if (nodes.length <= leafSize) { emit(nodes); return; }
    const id = pieceId++;
    for (let i = 0; i < nodes.length; i++) member[nodes[i]] = id;
    // pseudo-peripheral start: repeat BFS from a farthest node of least degree while the depth grows
    let start = nodes[0];
    let r = bfs(start, id);
    for (let it = 0; it < 4; it++) {
      let best = -1, bestDeg = Infinity;
      for (let q = r.count - 1; q >= 0 && depth[queue[q]] === r.levels - 1; q--) {
        const v = queue[q], d = off[v + 1] - off[v];
        if (d < bestDeg) { bestDeg = d; best = v; }
      }
      const r2 = bfs(best, id);
      if (r2.levels <= r.levels) { r = bfs(start, id); break; }
      start = best; r = r2;
    }
    if (r.count < nodes.length) {
      // several components: the reached one, then the rest
      const reached = queue.slice(0, r.count);
      const mark = seen[start];
      const rest = new Int32Array(nodes.length - r.count);
      let t = 0;
      for (let i = 0; i < nodes.length; i++) if (seen[nodes[i]] !== mark) rest[t++] = nodes[i];
      dissect(reached);
      dissect(rest);
      return;
    }
    if (r.levels < 3) { emit(nodes); return; }
    // size[l]: nodes of level l; cut[l]: those with a neighbour in level l + 1 (the separator level l would need)
    const size = new Int32Array(r.levels), cut = new Int32Array(r.levels);
    const bfsMark = seen[start];
    for (let q = 0; q < r.count; q++) {
      const v = queue[q], d = depth[v];
      size[d]++;
      for (let p = off[v]; p < off[v + 1]; p++) {
        const w = idx[p];
        if (member[w] === id && seen[w] === bfsMark && depth[w] === d + 1) { cut[d]++; break; }
      }
    }
    // the level with the smallest cut among those whose nodes before it make up 20–80 % of the piece; the median otherwise
    let sep = -1, before = 0, median = -1;
    for (let l = 0; l < r.levels; l++) {
      if (median < 0 && before + size[l] >= nodes.length / 2) median = l;
      if (l > 0 && l < r.levels - 1 && before >= 0.2 * nodes.length && before <= 0.8 * nodes.length) {
        if (sep < 0 || cut[l] < cut[sep]) sep = l;
      }
      before += size[l];
    }
    if (sep < 0) sep = Math.min(Math.max(median, 1), r.levels - 2);
    // only the nodes of level `sep` with a neighbour in the next level are needed to separate; the others join the near side
    const a: number[] = [], b: number[] = [], s: number[] = [];
    for (let q = 0; q < r.count; q++) {
      const v = queue[q], d = depth[v];
      if (d < sep) a.push(v);
      else if (d > sep) b.push(v);
      else {
        let touches = false;
        for (let p = off[v]; p < off[v + 1] && !touches; p++) {
          const w = idx[p];
          if (member[w] === id && seen[w] === bfsMark && depth[w] === sep + 1) touches = true;
        }
        (touches ? s : a).push(v);
      }
    }
    dissect(Int32Array.from(a));
    dissect(Int32Array.from(b));
    emit(s);
  }

  const all = new Int32Array(n);
  for (let i = 0; i < n; i++) all[i] = i;
  dissect(all);
  if (filled !== n) throw new SolverError("breakdown", `nested dissection ordered ${filled} of ${n} nodes`);
  return order;
}

/**
 * Pattern of the expanded matrix in CSC form, in the new order: unknown (position P, component c) has index
 * P·nComp + c; column (P, c) holds rows (Q, d) for Q ∈ {P} ∪ neighbours(P) and every d, sorted.
 */
export interface BlockPattern {
  readonly n: number;
  readonly nComp: number;
  /** position[node] = P, order[P] = node. */
  readonly position: Int32Array;
  readonly order: Int32Array;
  /** Per position P, the sorted positions of {P} ∪ neighbours (CSR). */
  readonly blockOffset: Int32Array;
  readonly blockIndex: Int32Array;
  readonly colPtr: Int32Array;
  readonly rowIdx: Int32Array;
  /** For the entry at slot p = (i, j), the slot of (j, i). */
  readonly transposeSlot: Int32Array;
}

export function blockPattern(g: NodeGraph, order: Int32Array, nComp: number): BlockPattern {
  const nNodes = g.nNodes;
  const position = new Int32Array(nNodes);
  for (let P = 0; P < nNodes; P++) position[order[P]] = P;
  const blockOffset = new Int32Array(nNodes + 1);
  for (let P = 0; P < nNodes; P++) {
    const v = order[P];
    blockOffset[P + 1] = blockOffset[P] + 1 + g.offset[v + 1] - g.offset[v];
  }
  const blockIndex = new Int32Array(blockOffset[nNodes]);
  for (let P = 0; P < nNodes; P++) {
    const v = order[P];
    const list = [P];
    for (let p = g.offset[v]; p < g.offset[v + 1]; p++) list.push(position[g.index[p]]);
    list.sort((x, y) => x - y);
    blockIndex.set(list, blockOffset[P]);
  }
  const n = nNodes * nComp;
  const colPtr = new Int32Array(n + 1);
  for (let P = 0; P < nNodes; P++) {
    const len = (blockOffset[P + 1] - blockOffset[P]) * nComp;
    for (let c = 0; c < nComp; c++) colPtr[P * nComp + c + 1] = colPtr[P * nComp + c] + len;
  }
  const rowIdx = new Int32Array(colPtr[n]);
  for (let P = 0; P < nNodes; P++) {
    for (let c = 0; c < nComp; c++) {
      let s = colPtr[P * nComp + c];
      for (let q = blockOffset[P]; q < blockOffset[P + 1]; q++) for (let d = 0; d < nComp; d++) rowIdx[s++] = blockIndex[q] * nComp + d;
    }
  }
  // the pattern is symmetric with sorted columns, so walking the columns in order fills each row's slots in order
  const transposeSlot = new Int32Array(colPtr[n]);
  const next = colPtr.slice(0, n);
  for (let j = 0; j < n; j++) for (let p = colPtr[j]; p < colPtr[j + 1]; p++) transposeSlot[p] = next[rowIdx[p]]++;
  return { n, nComp, position, order, blockOffset, blockIndex, colPtr, rowIdx, transposeSlot };
}

/** Symbolic factorization: elimination tree and the column pointers of L (strictly lower part). */
export interface SymbolicLu {
  readonly n: number;
  readonly parent: Int32Array;
  readonly lColPtr: Int32Array;
  /** Entries of the strictly lower part L (the strictly upper part U has as many). */
  readonly nnzL: number;
  /** Multiply-adds of the numeric factorization. */
  readonly factorMultiplyAdds: number;
}

export interface LuLimits {
  /** Largest nnz(L) allowed (memory: 20 bytes per entry). */
  maxFill: number;
  /** Largest multiply-add count of one factorization. */
  maxWork: number;
  /** Field named in the refusal. */
  field: string;
}

/** Row pattern of L(k, :) in topological order into s[top..n); returns top (Davis 2006, cs_ereach). */
function ereach(colPtr: Int32Array, rowIdx: Int32Array, k: number, parent: Int32Array, s: Int32Array, mark: Int32Array, stack: Int32Array): number {
  const n = s.length;
  let top = n;
  mark[k] = k;
  for (let p = colPtr[k]; p < colPtr[k + 1]; p++) {
    let i = rowIdx[p];
    if (i > k) continue;
    let len = 0;
    while (mark[i] !== k) { stack[len++] = i; mark[i] = k; i = parent[i]; }
    while (len > 0) s[--top] = stack[--len];
  }
  return top;
}

export function symbolicLu(pattern: { n: number; colPtr: Int32Array; rowIdx: Int32Array }, limits: LuLimits): SymbolicLu {
  const { n, colPtr, rowIdx } = pattern;
  // elimination tree with path compression (Liu 1986; Davis 2006, cs_etree)
  const parent = new Int32Array(n).fill(-1), ancestor = new Int32Array(n).fill(-1);
  for (let k = 0; k < n; k++) {
    for (let p = colPtr[k]; p < colPtr[k + 1]; p++) {
      let i = rowIdx[p];
      while (i !== -1 && i < k) {
        const inext = ancestor[i];
        ancestor[i] = k;
        if (inext === -1) parent[i] = k;
        i = inext;
      }
    }
  }
  const counts = new Float64Array(n);
  const s = new Int32Array(n), mark = new Int32Array(n).fill(-1), stack = new Int32Array(n);
  let work = 0;
  for (let k = 0; k < n; k++) {
    const top = ereach(colPtr, rowIdx, k, parent, s, mark, stack);
    for (let t = top; t < n; t++) {
      const i = s[t];
      work += 2 * counts[i] + 1; // updates from column i of L and row i of U, then the pivot term
      counts[i]++;
    }
  }
  let nnzL = 0;
  for (let i = 0; i < n; i++) nnzL += counts[i];
  if (nnzL > limits.maxFill) {
    throw new SolverError("bad-input", `${limits.field}: the sparse factorization would hold ${nnzL.toExponential(2)} entries, more than the bound ${limits.maxFill.toExponential(2)}; use fewer modes or a smaller mesh`, limits.field);
  }
  if (work > limits.maxWork) {
    throw new SolverError("bad-input", `${limits.field}: the sparse factorization would take ${work.toExponential(2)} multiply-adds, more than the bound ${limits.maxWork.toExponential(2)}; use fewer modes or a smaller mesh`, limits.field);
  }
  const lColPtr = new Int32Array(n + 1);
  for (let i = 0; i < n; i++) lColPtr[i + 1] = lColPtr[i] + counts[i];
  return { n, parent, lColPtr, nnzL, factorMultiplyAdds: work };
}

/** Numeric factors A = (I + L) (D + U): L strictly lower by columns, U strictly upper by rows (same indices). */
export interface NumericLu {
  readonly n: number;
  readonly lColPtr: Int32Array;
  readonly index: Int32Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  readonly pivot: Float64Array;
  /** Smallest |pivot| / largest |diagonal of A|, a cheap check of the factorization's health. */
  readonly pivotRatio: number;
}

/** Work arrays of `numericLu`, reusable across factorizations of the same pattern. */
export interface LuWork {
  s: Int32Array; mark: Int32Array; stack: Int32Array; next: Int32Array; xu: Float64Array; xl: Float64Array;
}
export function luWork(n: number): LuWork {
  return {
    s: new Int32Array(n), mark: new Int32Array(n), stack: new Int32Array(n), next: new Int32Array(n),
    xu: new Float64Array(n), xl: new Float64Array(n),
  };
}

/**
 * Up-looking LU of the matrix with values `values` on `pattern` (values[p] = A(rowIdx[p], column of p)).
 * At step k the column U(0:k−1, k) and the row L(k, 0:k−1) come from two sparse triangular solves over the
 * row pattern of k (the same for both since the pattern is symmetric).
 */
export function numericLu(
  pattern: { n: number; colPtr: Int32Array; rowIdx: Int32Array; transposeSlot: Int32Array },
  sym: SymbolicLu, values: Float64Array, work: LuWork = luWork(pattern.n), into?: NumericLu,
): NumericLu {
  const { n, colPtr, rowIdx, transposeSlot: ts } = pattern;
  const { parent, lColPtr } = sym;
  const index = into?.index ?? new Int32Array(sym.nnzL);
  const lower = into?.lower ?? new Float64Array(sym.nnzL);
  const upper = into?.upper ?? new Float64Array(sym.nnzL);
  const pivot = into?.pivot ?? new Float64Array(n);
  const { s, mark, stack, next, xu, xl } = work;
  mark.fill(-1);
  next.set(lColPtr.subarray(0, n));
  xu.fill(0); xl.fill(0);
  let minPivot = Infinity, maxDiag = 0;
  for (let k = 0; k < n; k++) {
    const top = ereach(colPtr, rowIdx, k, parent, s, mark, stack);
    for (let p = colPtr[k]; p < colPtr[k + 1]; p++) {
      const i = rowIdx[p];
      if (i <= k) { xu[i] = values[p]; xl[i] = values[ts[p]]; }
    }
    let dk = xu[k];
    maxDiag = Math.max(maxDiag, Math.abs(dk));
    xu[k] = 0; xl[k] = 0;
    for (let t = top; t < n; t++) {
      const i = s[t];
      const uik = xu[i];
      const lki = xl[i] / pivot[i];
      xu[i] = 0; xl[i] = 0;
      const end = next[i];
      for (let p = lColPtr[i]; p < end; p++) {
        const j = index[p];
        xu[j] -= lower[p] * uik;
        xl[j] -= upper[p] * lki;
      }
      dk -= lki * uik;
      const p = next[i]++;
      index[p] = k; lower[p] = lki; upper[p] = uik;
    }
    if (!(Math.abs(dk) > 0) || !Number.isFinite(dk)) throw new SolverError("breakdown", `sparse LU: zero or non-finite pivot at ${k} of ${n}`);
    pivot[k] = dk;
    minPivot = Math.min(minPivot, Math.abs(dk));
  }
  return { n, lColPtr, index, lower, upper, pivot, pivotRatio: minPivot / maxDiag };
}

/** Solve A y = y in place with the factors (forward with I + L, backward with D + U). */
export function luSolveInPlace(f: NumericLu, y: Float64Array): void {
  const { n, lColPtr: cp, index: ix, lower: lo, upper: up, pivot: d } = f;
  for (let j = 0; j < n; j++) {
    const yj = y[j];
    if (yj === 0) continue;
    const end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) y[ix[p]] -= lo[p] * yj;
  }
  for (let j = n - 1; j >= 0; j--) {
    let s = y[j];
    const end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) s -= up[p] * y[ix[p]];
    y[j] = s / d[j];
  }
}

/**
 * Distance-2 greedy colouring of the graph: no two nodes of one colour are neighbours or share a neighbour,
 * so one product with the sum of a colour's unit vectors reads off all their columns (Curtis, Powell & Reid
 * 1974, IMA J. Appl. Math. 13, 117–119). Returns colour[node] and the number of colours.
 */
export function distance2Colouring(g: NodeGraph): { colour: Int32Array; count: number } {
  const n = g.nNodes, off = g.offset, idx = g.index;
  const colour = new Int32Array(n).fill(-1);
  const forbidden = new Int32Array(n + 1).fill(-1);
  let count = 0;
  for (let v = 0; v < n; v++) {
    for (let p = off[v]; p < off[v + 1]; p++) {
      const w = idx[p];
      if (colour[w] >= 0) forbidden[colour[w]] = v;
      for (let q = off[w]; q < off[w + 1]; q++) {
        const z = idx[q];
        if (colour[z] >= 0) forbidden[colour[z]] = v;
      }
    }
    let c = 0;
    while (forbidden[c] === v) c++;
    colour[v] = c;
    if (c + 1 > count) count = c + 1;
  }
  return { colour, count };
}

/**
 * Block factors A = (I + L)(D + U) on a node pattern whose entries are dense b×b blocks (row-major):
 * L strictly lower by block columns, U strictly upper by block rows (same indices), D⁻¹ the inverses of the
 * pivot blocks. The flops are those of the scalar factorization of the expanded pattern; the index work is
 * b² times smaller.
 */
export interface BlockLu {
  readonly nNodes: number;
  readonly b: number;
  readonly lColPtr: Int32Array;
  readonly index: Int32Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  readonly pivotInverse: Float64Array;
}

export interface BlockLuWork {
  s: Int32Array; mark: Int32Array; stack: Int32Array; next: Int32Array;
  xu: Float64Array; xl: Float64Array; tu: Float64Array; tl: Float64Array; dk: Float64Array; inv: Float64Array; piv: Int32Array;
}
export function blockLuWork(nNodes: number, b: number): BlockLuWork {
  const bb = b * b;
  return {
    s: new Int32Array(nNodes), mark: new Int32Array(nNodes), stack: new Int32Array(nNodes), next: new Int32Array(nNodes),
    xu: new Float64Array(nNodes * bb), xl: new Float64Array(nNodes * bb), tu: new Float64Array(bb), tl: new Float64Array(bb),
    dk: new Float64Array(bb), inv: new Float64Array(bb), piv: new Int32Array(b),
  };
}

/** Symbolic factorization of a block pattern: the node-level analysis, limits counted in scalar entries and flops. */
export function symbolicBlockLu(pattern: BlockPattern, limits: LuLimits): SymbolicLu {
  const b = pattern.nComp, bb = b * b;
  const s = symbolicLu(
    { n: pattern.order.length, colPtr: pattern.blockOffset, rowIdx: pattern.blockIndex },
    { maxFill: limits.maxFill / bb, maxWork: limits.maxWork / (bb * b), field: limits.field },
  );
  return { ...s, nnzL: s.nnzL, factorMultiplyAdds: s.factorMultiplyAdds * bb * b };
}

/** out = inverse of the b×b block a (Gauss–Jordan with partial pivoting); a is destroyed. */
function invertBlock(out: Float64Array, a: Float64Array, b: number, piv: Int32Array): void {
  out.fill(0);
  for (let i = 0; i < b; i++) out[i * b + i] = 1;
  for (let k = 0; k < b; k++) {
    let p = k, best = Math.abs(a[k * b + k]);
    for (let i = k + 1; i < b; i++) { const v = Math.abs(a[i * b + k]); if (v > best) { best = v; p = i; } }
    if (!(best > 0) || !Number.isFinite(best)) throw new SolverError("breakdown", "sparse LU: singular pivot block");
    piv[k] = p;
    if (p !== k) {
      for (let j = 0; j < b; j++) {
        let t = a[k * b + j]; a[k * b + j] = a[p * b + j]; a[p * b + j] = t;
        t = out[k * b + j]; out[k * b + j] = out[p * b + j]; out[p * b + j] = t;
      }
    }
    const d = 1 / a[k * b + k];
    for (let j = 0; j < b; j++) { a[k * b + j] *= d; out[k * b + j] *= d; }
    for (let i = 0; i < b; i++) {
      if (i === k) continue;
      const f = a[i * b + k];
      if (f === 0) continue;
      for (let j = 0; j < b; j++) { a[i * b + j] -= f * a[k * b + j]; out[i * b + j] -= f * out[k * b + j]; }
    }
  }
}

/**
 * Up-looking block LU of the matrix whose block (Q, P) (row node Q, column node P) sits at
 * values[slot·b² ...] (row-major) for slot = the position of Q in the sorted list of P (pattern.blockOffset).
 */
export function numericBlockLu(pattern: BlockPattern, sym: SymbolicLu, values: Float64Array, work?: BlockLuWork, into?: BlockLu): BlockLu {
  const b = pattern.nComp, bb = b * b, nNodes = pattern.order.length;
  const colPtr = pattern.blockOffset, rowIdx = pattern.blockIndex;
  const { parent, lColPtr } = sym;
  const ts = blockTransposeSlot(pattern);
  const w = work ?? blockLuWork(nNodes, b);
  const index = into?.index ?? new Int32Array(sym.nnzL);
  const lower = into?.lower ?? new Float64Array(sym.nnzL * bb);
  const upper = into?.upper ?? new Float64Array(sym.nnzL * bb);
  const pivotInverse = into?.pivotInverse ?? new Float64Array(nNodes * bb);
  if (b === 1) {
    // scalar blocks: the scalar factorization on the same layout is faster than the block loops with b = 1
    const f = numericLu(
      { n: nNodes, colPtr, rowIdx, transposeSlot: ts }, sym, values,
      { s: w.s, mark: w.mark, stack: w.stack, next: w.next, xu: w.xu, xl: w.xl },
      { n: nNodes, lColPtr, index, lower, upper, pivot: pivotInverse, pivotRatio: 0 },
    );
    for (let k = 0; k < nNodes; k++) pivotInverse[k] = 1 / f.pivot[k];
    return { nNodes, b, lColPtr, index, lower, upper, pivotInverse };
  }
  const { s, mark, stack, next, xu, xl, tu, tl, dk, inv, piv } = w;
  mark.fill(-1);
  next.set(lColPtr.subarray(0, nNodes));
  xu.fill(0); xl.fill(0);
  for (let k = 0; k < nNodes; k++) {
    const top = ereach(colPtr, rowIdx, k, parent, s, mark, stack);
    for (let p = colPtr[k]; p < colPtr[k + 1]; p++) {
      const i = rowIdx[p];
      if (i > k) continue;
      const src = p * bb, srcT = ts[p] * bb, dst = i * bb;
      for (let q = 0; q < bb; q++) { xu[dst + q] = values[src + q]; xl[dst + q] = values[srcT + q]; }
    }
    const kb = k * bb;
    for (let q = 0; q < bb; q++) { dk[q] = xu[kb + q]; xu[kb + q] = 0; xl[kb + q] = 0; }
    for (let t = top; t < nNodes; t++) {
      const i = s[t], ib = i * bb;
      // U(i,k) = XU_i; L(k,i) = XL_i D_i⁻¹
      for (let q = 0; q < bb; q++) { tu[q] = xu[ib + q]; xu[ib + q] = 0; }
      for (let r = 0; r < b; r++) {
        for (let c = 0; c < b; c++) {
          let acc = 0;
          for (let m = 0; m < b; m++) acc += xl[ib + r * b + m] * pivotInverse[ib + m * b + c];
          tl[r * b + c] = acc;
        }
      }
      for (let q = 0; q < bb; q++) xl[ib + q] = 0;
      const end = next[i];
      if (b === 3) {
        update3(xu, xl, lower, upper, index, lColPtr[i], end, tu, tl);
      } else for (let p = lColPtr[i]; p < end; p++) {
        const jb = index[p] * bb, pb = p * bb;
        // XU_j −= L(j,i) U(i,k);  XL_j −= L(k,i) U(i,j)
        for (let r = 0; r < b; r++) {
          for (let c = 0; c < b; c++) {
            let au = 0, al = 0;
            for (let m = 0; m < b; m++) {
              au += lower[pb + r * b + m] * tu[m * b + c];
              al += tl[r * b + m] * upper[pb + m * b + c];
            }
            xu[jb + r * b + c] -= au;
            xl[jb + r * b + c] -= al;
          }
        }
      }
      for (let r = 0; r < b; r++) {
        for (let c = 0; c < b; c++) {
          let acc = 0;
          for (let m = 0; m < b; m++) acc += tl[r * b + m] * tu[m * b + c];
          dk[r * b + c] -= acc;
        }
      }
      const p = next[i]++;
      index[p] = k;
      const pb = p * bb;
      for (let q = 0; q < bb; q++) { lower[pb + q] = tl[q]; upper[pb + q] = tu[q]; }
    }
    invertBlock(inv, dk, b, piv);
    for (let q = 0; q < bb; q++) {
      if (!Number.isFinite(inv[q])) throw new SolverError("breakdown", `sparse LU: non-finite pivot block at ${k} of ${nNodes}`);
      pivotInverse[kb + q] = inv[q];
    }
  }
  return { nNodes, b, lColPtr, index, lower, upper, pivotInverse };
}

const transposeCache = new WeakMap<BlockPattern, Int32Array>();
/** For the block at node slot p = (Q, P), the slot of (P, Q) (the node pattern is symmetric with sorted lists). */
function blockTransposeSlot(pattern: BlockPattern): Int32Array {
  let ts = transposeCache.get(pattern);
  if (!ts) {
    const off = pattern.blockOffset, idx = pattern.blockIndex, n = pattern.order.length;
    ts = new Int32Array(idx.length);
    const next = off.slice(0, n);
    for (let j = 0; j < n; j++) for (let p = off[j]; p < off[j + 1]; p++) ts[p] = next[idx[p]]++;
    transposeCache.set(pattern, ts);
  }
  return ts;
}

/** Solve A y = y in place with block factors; y in the new order (node position P, component c at P·b + c). */
export function blockLuSolveInPlace(f: BlockLu, y: Float64Array, tmp: Float64Array): void {
  const { nNodes, b, lColPtr: cp, index: ix, lower: lo, upper: up, pivotInverse: dinv } = f;
  const bb = b * b;
  if (b === 1) {
    for (let j = 0; j < nNodes; j++) {
      const yj = y[j];
      if (yj === 0) continue;
      const end = cp[j + 1];
      for (let p = cp[j]; p < end; p++) y[ix[p]] -= lo[p] * yj;
    }
    for (let j = nNodes - 1; j >= 0; j--) {
      let s = y[j];
      const end = cp[j + 1];
      for (let p = cp[j]; p < end; p++) s -= up[p] * y[ix[p]];
      y[j] = s * dinv[j];
    }
    return;
  }
  if (b === 2) { solve2(f, y); return; }
  if (b === 3) { solve3(f, y); return; }
  for (let j = 0; j < nNodes; j++) {
    const jb = j * b, end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) {
      const ib = ix[p] * b, pb = p * bb;
      for (let r = 0; r < b; r++) {
        let acc = 0;
        for (let m = 0; m < b; m++) acc += lo[pb + r * b + m] * y[jb + m];
        y[ib + r] -= acc;
      }
    }
  }
  for (let j = nNodes - 1; j >= 0; j--) {
    const jb = j * b, end = cp[j + 1];
    for (let r = 0; r < b; r++) tmp[r] = y[jb + r];
    for (let p = cp[j]; p < end; p++) {
      const ib = ix[p] * b, pb = p * bb;
      for (let r = 0; r < b; r++) {
        let acc = 0;
        for (let m = 0; m < b; m++) acc += up[pb + r * b + m] * y[ib + m];
        tmp[r] -= acc;
      }
    }
    for (let r = 0; r < b; r++) {
      let acc = 0;
      for (let m = 0; m < b; m++) acc += dinv[jb * b + r * b + m] * tmp[m];
      y[jb + r] = acc;
    }
  }
}

/** blockLuSolveInPlace for 2×2 blocks, written out (two layers, or the two fastest modes). */
function solve2(f: BlockLu, y: Float64Array): void {
  const { nNodes, lColPtr: cp, index: ix, lower: lo, upper: up, pivotInverse: di } = f;
  for (let j = 0; j < nNodes; j++) {
    const jb = 2 * j, y0 = y[jb], y1 = y[jb + 1];
    if (y0 === 0 && y1 === 0) continue;
    const end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) {
      const ib = 2 * ix[p], pb = 4 * p;
      y[ib] -= lo[pb] * y0 + lo[pb + 1] * y1;
      y[ib + 1] -= lo[pb + 2] * y0 + lo[pb + 3] * y1;
    }
  }
  for (let j = nNodes - 1; j >= 0; j--) {
    const jb = 2 * j, end = cp[j + 1];
    let t0 = y[jb], t1 = y[jb + 1];
    for (let p = cp[j]; p < end; p++) {
      const ib = 2 * ix[p], pb = 4 * p;
      const x0 = y[ib], x1 = y[ib + 1];
      t0 -= up[pb] * x0 + up[pb + 1] * x1;
      t1 -= up[pb + 2] * x0 + up[pb + 3] * x1;
    }
    const db = 4 * j;
    y[jb] = di[db] * t0 + di[db + 1] * t1;
    y[jb + 1] = di[db + 2] * t0 + di[db + 3] * t1;
  }
}

/** blockLuSolveInPlace for 3×3 blocks, written out (three layers or modes: the common case). */
function solve3(f: BlockLu, y: Float64Array): void {
  const { nNodes, lColPtr: cp, index: ix, lower: lo, upper: up, pivotInverse: di } = f;
  for (let j = 0; j < nNodes; j++) {
    const jb = 3 * j, y0 = y[jb], y1 = y[jb + 1], y2 = y[jb + 2];
    if (y0 === 0 && y1 === 0 && y2 === 0) continue;
    const end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) {
      const ib = 3 * ix[p], pb = 9 * p;
      y[ib] -= lo[pb] * y0 + lo[pb + 1] * y1 + lo[pb + 2] * y2;
      y[ib + 1] -= lo[pb + 3] * y0 + lo[pb + 4] * y1 + lo[pb + 5] * y2;
      y[ib + 2] -= lo[pb + 6] * y0 + lo[pb + 7] * y1 + lo[pb + 8] * y2;
    }
  }
  for (let j = nNodes - 1; j >= 0; j--) {
    const jb = 3 * j, end = cp[j + 1];
    let t0 = y[jb], t1 = y[jb + 1], t2 = y[jb + 2];
    for (let p = cp[j]; p < end; p++) {
      const ib = 3 * ix[p], pb = 9 * p;
      const x0 = y[ib], x1 = y[ib + 1], x2 = y[ib + 2];
      t0 -= up[pb] * x0 + up[pb + 1] * x1 + up[pb + 2] * x2;
      t1 -= up[pb + 3] * x0 + up[pb + 4] * x1 + up[pb + 5] * x2;
      t2 -= up[pb + 6] * x0 + up[pb + 7] * x1 + up[pb + 8] * x2;
    }
    const db = 9 * j;
    y[jb] = di[db] * t0 + di[db + 1] * t1 + di[db + 2] * t2;
    y[jb + 1] = di[db + 3] * t0 + di[db + 4] * t1 + di[db + 5] * t2;
    y[jb + 2] = di[db + 6] * t0 + di[db + 7] * t1 + di[db + 8] * t2;
  }
}

/** The inner update of numericBlockLu for 3×3 blocks, written out: XU_j −= L(j,i)·TU, XL_j −= TL·U(i,j). */
function update3(xu: Float64Array, xl: Float64Array, lower: Float64Array, upper: Float64Array, index: Int32Array, start: number, end: number, tu: Float64Array, tl: Float64Array): void {
  const u0 = tu[0], u1 = tu[1], u2 = tu[2], u3 = tu[3], u4 = tu[4], u5 = tu[5], u6 = tu[6], u7 = tu[7], u8 = tu[8];
  const l0 = tl[0], l1 = tl[1], l2 = tl[2], l3 = tl[3], l4 = tl[4], l5 = tl[5], l6 = tl[6], l7 = tl[7], l8 = tl[8];
  for (let p = start; p < end; p++) {
    const jb = 9 * index[p], pb = 9 * p;
    const a0 = lower[pb], a1 = lower[pb + 1], a2 = lower[pb + 2], a3 = lower[pb + 3], a4 = lower[pb + 4], a5 = lower[pb + 5], a6 = lower[pb + 6], a7 = lower[pb + 7], a8 = lower[pb + 8];
    xu[jb] -= a0 * u0 + a1 * u3 + a2 * u6; xu[jb + 1] -= a0 * u1 + a1 * u4 + a2 * u7; xu[jb + 2] -= a0 * u2 + a1 * u5 + a2 * u8;
    xu[jb + 3] -= a3 * u0 + a4 * u3 + a5 * u6; xu[jb + 4] -= a3 * u1 + a4 * u4 + a5 * u7; xu[jb + 5] -= a3 * u2 + a4 * u5 + a5 * u8;
    xu[jb + 6] -= a6 * u0 + a7 * u3 + a8 * u6; xu[jb + 7] -= a6 * u1 + a7 * u4 + a8 * u7; xu[jb + 8] -= a6 * u2 + a7 * u5 + a8 * u8;
    const b0 = upper[pb], b1 = upper[pb + 1], b2 = upper[pb + 2], b3 = upper[pb + 3], b4 = upper[pb + 4], b5 = upper[pb + 5], b6 = upper[pb + 6], b7 = upper[pb + 7], b8 = upper[pb + 8];
    xl[jb] -= l0 * b0 + l1 * b3 + l2 * b6; xl[jb + 1] -= l0 * b1 + l1 * b4 + l2 * b7; xl[jb + 2] -= l0 * b2 + l1 * b5 + l2 * b8;
    xl[jb + 3] -= l3 * b0 + l4 * b3 + l5 * b6; xl[jb + 4] -= l3 * b1 + l4 * b4 + l5 * b7; xl[jb + 5] -= l3 * b2 + l4 * b5 + l5 * b8;
    xl[jb + 6] -= l6 * b0 + l7 * b3 + l8 * b6; xl[jb + 7] -= l6 * b1 + l7 * b4 + l8 * b7; xl[jb + 8] -= l6 * b2 + l7 * b5 + l8 * b8;
  }
}

/**
 * Complex factors A = (I + L)(D + U) of a complex matrix on a scalar symmetric pattern (real and imaginary parts
 * in separate arrays); `index` is fixed by the pattern, so factorizations of one pattern may share it.
 */
export interface ComplexLu {
  readonly n: number;
  readonly lColPtr: Int32Array;
  readonly index: Int32Array;
  readonly lowerRe: Float64Array; readonly lowerIm: Float64Array;
  readonly upperRe: Float64Array; readonly upperIm: Float64Array;
  /** 1/D. */
  readonly pivotInvRe: Float64Array; readonly pivotInvIm: Float64Array;
  /** Largest |U_ij| or |D_i| over the largest |A_ij| (the element growth of the elimination). */
  growth: number;
}

export interface ComplexLuWork {
  s: Int32Array; mark: Int32Array; stack: Int32Array; next: Int32Array;
  xuR: Float64Array; xuI: Float64Array; xlR: Float64Array; xlI: Float64Array;
}
export function complexLuWork(n: number): ComplexLuWork {
  return {
    s: new Int32Array(n), mark: new Int32Array(n), stack: new Int32Array(n), next: new Int32Array(n),
    xuR: new Float64Array(n), xuI: new Float64Array(n), xlR: new Float64Array(n), xlI: new Float64Array(n),
  };
}

/**
 * Up-looking LU without pivoting of the complex matrix with values (valRe + i valIm)[p] = A(rowIdx[p], column of p)
 * on a symmetric pattern: `numericLu` in complex arithmetic. `index` may be shared with other factorizations of
 * the same pattern (every factorization writes the same numbers into it).
 */
export function numericComplexLu(
  pattern: { n: number; colPtr: Int32Array; rowIdx: Int32Array; transposeSlot: Int32Array },
  sym: SymbolicLu, valRe: Float64Array, valIm: Float64Array, work: ComplexLuWork, index: Int32Array, into?: ComplexLu,
): ComplexLu {
  const { n, colPtr, rowIdx, transposeSlot: ts } = pattern;
  const { parent, lColPtr } = sym;
  const lowerRe = into?.lowerRe ?? new Float64Array(sym.nnzL), lowerIm = into?.lowerIm ?? new Float64Array(sym.nnzL);
  const upperRe = into?.upperRe ?? new Float64Array(sym.nnzL), upperIm = into?.upperIm ?? new Float64Array(sym.nnzL);
  const pivotInvRe = into?.pivotInvRe ?? new Float64Array(n), pivotInvIm = into?.pivotInvIm ?? new Float64Array(n);
  const { s, mark, stack, next, xuR, xuI, xlR, xlI } = work;
  mark.fill(-1);
  next.set(lColPtr.subarray(0, n));
  xuR.fill(0); xuI.fill(0); xlR.fill(0); xlI.fill(0);
  let maxA = 0, maxU = 0;
  for (let p = 0; p < valRe.length; p++) maxA = Math.max(maxA, Math.hypot(valRe[p], valIm[p]));
  for (let k = 0; k < n; k++) {
    const top = ereach(colPtr, rowIdx, k, parent, s, mark, stack);
    for (let p = colPtr[k]; p < colPtr[k + 1]; p++) {
      const i = rowIdx[p];
      if (i <= k) { xuR[i] = valRe[p]; xuI[i] = valIm[p]; xlR[i] = valRe[ts[p]]; xlI[i] = valIm[ts[p]]; }
    }
    let dR = xuR[k], dI = xuI[k];
    xuR[k] = 0; xuI[k] = 0; xlR[k] = 0; xlI[k] = 0;
    for (let t = top; t < n; t++) {
      const i = s[t];
      const uR = xuR[i], uI = xuI[i];
      const aR = xlR[i], aI = xlI[i], qR = pivotInvRe[i], qI = pivotInvIm[i];
      const lR = aR * qR - aI * qI, lI = aR * qI + aI * qR;
      xuR[i] = 0; xuI[i] = 0; xlR[i] = 0; xlI[i] = 0;
      const end = next[i];
      for (let p = lColPtr[i]; p < end; p++) {
        const j = index[p];
        const mR = lowerRe[p], mI = lowerIm[p], vR = upperRe[p], vI = upperIm[p];
        xuR[j] -= mR * uR - mI * uI; xuI[j] -= mR * uI + mI * uR;
        xlR[j] -= lR * vR - lI * vI; xlI[j] -= lR * vI + lI * vR;
      }
      dR -= lR * uR - lI * uI; dI -= lR * uI + lI * uR;
      const p = next[i]++;
      index[p] = k; lowerRe[p] = lR; lowerIm[p] = lI; upperRe[p] = uR; upperIm[p] = uI;
      const au = Math.hypot(uR, uI);
      if (au > maxU) maxU = au;
    }
    const d2 = dR * dR + dI * dI;
    if (!(d2 > 0) || !Number.isFinite(d2)) throw new SolverError("breakdown", `sparse complex LU: zero or non-finite pivot at ${k} of ${n}`);
    pivotInvRe[k] = dR / d2; pivotInvIm[k] = -dI / d2;
    const ad = Math.sqrt(d2);
    if (ad > maxU) maxU = ad;
  }
  const growth = maxU / maxA;
  if (into) { into.growth = growth; return into; }
  return { n, lColPtr, index, lowerRe, lowerIm, upperRe, upperIm, pivotInvRe, pivotInvIm, growth };
}

/** Solve A y = r in place (y = yRe + i yIm) with complex factors. */
export function complexLuSolveInPlace(f: ComplexLu, yRe: Float64Array, yIm: Float64Array): void {
  const { n, lColPtr: cp, index: ix, lowerRe: lr, lowerIm: li, upperRe: ur, upperIm: ui, pivotInvRe: dr, pivotInvIm: di } = f;
  for (let j = 0; j < n; j++) {
    const aR = yRe[j], aI = yIm[j];
    if (aR === 0 && aI === 0) continue;
    const end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) {
      const i = ix[p];
      yRe[i] -= lr[p] * aR - li[p] * aI;
      yIm[i] -= lr[p] * aI + li[p] * aR;
    }
  }
  for (let j = n - 1; j >= 0; j--) {
    let sR = yRe[j], sI = yIm[j];
    const end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) {
      const i = ix[p], xR = yRe[i], xI = yIm[i];
      sR -= ur[p] * xR - ui[p] * xI;
      sI -= ur[p] * xI + ui[p] * xR;
    }
    yRe[j] = sR * dr[j] - sI * di[j];
    yIm[j] = sR * di[j] + sI * dr[j];
  }
}

/** blockTransposeSlot for callers that factor a block pattern by other routines (e.g. `numericComplexLu` with b = 1). */
export function blockPatternTransposeSlot(pattern: BlockPattern): Int32Array {
  return blockTransposeSlot(pattern);
}

/**
 * Complex block factors A = (I + L)(D + U) on a node pattern of dense b×b complex blocks (row-major; real and
 * imaginary parts apart), as `BlockLu`; `index` may be shared by factorizations of one pattern.
 */
export interface ComplexBlockLu {
  readonly nNodes: number;
  readonly b: number;
  readonly lColPtr: Int32Array;
  readonly index: Int32Array;
  readonly lowerRe: Float64Array; readonly lowerIm: Float64Array;
  readonly upperRe: Float64Array; readonly upperIm: Float64Array;
  readonly pivotInvRe: Float64Array; readonly pivotInvIm: Float64Array;
  /** Largest |U_ij| or |D_ij| over the largest |A_ij|. */
  growth: number;
}

export interface ComplexBlockLuWork {
  s: Int32Array; mark: Int32Array; stack: Int32Array; next: Int32Array;
  xuR: Float64Array; xuI: Float64Array; xlR: Float64Array; xlI: Float64Array;
  tuR: Float64Array; tuI: Float64Array; tlR: Float64Array; tlI: Float64Array;
  dR: Float64Array; dI: Float64Array; iR: Float64Array; iI: Float64Array;
}
export function complexBlockLuWork(nNodes: number, b: number): ComplexBlockLuWork {
  const bb = b * b, f = () => new Float64Array(bb);
  return {
    s: new Int32Array(nNodes), mark: new Int32Array(nNodes), stack: new Int32Array(nNodes), next: new Int32Array(nNodes),
    xuR: new Float64Array(nNodes * bb), xuI: new Float64Array(nNodes * bb), xlR: new Float64Array(nNodes * bb), xlI: new Float64Array(nNodes * bb),
    tuR: f(), tuI: f(), tlR: f(), tlI: f(), dR: f(), dI: f(), iR: f(), iI: f(),
  };
}

/** (oR + i oI) = inverse of the complex b×b block (aR + i aI) by Gauss–Jordan with partial pivoting; a is destroyed. */
function invertComplexBlock(oR: Float64Array, oI: Float64Array, aR: Float64Array, aI: Float64Array, b: number): void {
  oR.fill(0); oI.fill(0);
  for (let i = 0; i < b; i++) oR[i * b + i] = 1;
  const swap = (x: Float64Array, r1: number, r2: number) => { for (let j = 0; j < b; j++) { const t = x[r1 * b + j]; x[r1 * b + j] = x[r2 * b + j]; x[r2 * b + j] = t; } };
  for (let k = 0; k < b; k++) {
    let p = k, best = Math.hypot(aR[k * b + k], aI[k * b + k]);
    for (let i = k + 1; i < b; i++) { const v = Math.hypot(aR[i * b + k], aI[i * b + k]); if (v > best) { best = v; p = i; } }
    if (!(best > 0) || !Number.isFinite(best)) throw new SolverError("breakdown", "sparse complex LU: singular pivot block");
    if (p !== k) { swap(aR, k, p); swap(aI, k, p); swap(oR, k, p); swap(oI, k, p); }
    const pr = aR[k * b + k], pi = aI[k * b + k], m2 = pr * pr + pi * pi, qr = pr / m2, qi = -pi / m2;
    for (let j = 0; j < b; j++) {
      const q = k * b + j;
      let xr = aR[q], xi = aI[q]; aR[q] = xr * qr - xi * qi; aI[q] = xr * qi + xi * qr;
      xr = oR[q]; xi = oI[q]; oR[q] = xr * qr - xi * qi; oI[q] = xr * qi + xi * qr;
    }
    for (let i = 0; i < b; i++) {
      if (i === k) continue;
      const fr = aR[i * b + k], fi = aI[i * b + k];
      if (fr === 0 && fi === 0) continue;
      for (let j = 0; j < b; j++) {
        const q = i * b + j, r = k * b + j;
        aR[q] -= fr * aR[r] - fi * aI[r]; aI[q] -= fr * aI[r] + fi * aR[r];
        oR[q] -= fr * oR[r] - fi * oI[r]; oI[q] -= fr * oI[r] + fi * oR[r];
      }
    }
  }
}

/**
 * Up-looking complex block LU without pivoting between nodes (`numericBlockLu` in complex arithmetic): block (Q, P)
 * at val[slot·b² …] for slot = the position of Q in the sorted list of P.
 */
export function numericComplexBlockLu(
  pattern: BlockPattern, sym: SymbolicLu, valRe: Float64Array, valIm: Float64Array, w: ComplexBlockLuWork, index: Int32Array, into?: ComplexBlockLu,
): ComplexBlockLu {
  const b = pattern.nComp, bb = b * b, nNodes = pattern.order.length;
  const colPtr = pattern.blockOffset, rowIdx = pattern.blockIndex;
  const { parent, lColPtr } = sym;
  const ts = blockTransposeSlot(pattern);
  const nnz = sym.nnzL * bb;
  const lowerRe = into?.lowerRe ?? new Float64Array(nnz), lowerIm = into?.lowerIm ?? new Float64Array(nnz);
  const upperRe = into?.upperRe ?? new Float64Array(nnz), upperIm = into?.upperIm ?? new Float64Array(nnz);
  const pivotInvRe = into?.pivotInvRe ?? new Float64Array(nNodes * bb), pivotInvIm = into?.pivotInvIm ?? new Float64Array(nNodes * bb);
  const { s, mark, stack, next, xuR, xuI, xlR, xlI, tuR, tuI, tlR, tlI, dR, dI, iR, iI } = w;
  mark.fill(-1);
  next.set(lColPtr.subarray(0, nNodes));
  xuR.fill(0); xuI.fill(0); xlR.fill(0); xlI.fill(0);
  let maxA = 0, maxU = 0;
  for (let p = 0; p < valRe.length; p++) maxA = Math.max(maxA, Math.hypot(valRe[p], valIm[p]));
  for (let k = 0; k < nNodes; k++) {
    const top = ereach(colPtr, rowIdx, k, parent, s, mark, stack);
    for (let p = colPtr[k]; p < colPtr[k + 1]; p++) {
      const i = rowIdx[p];
      if (i > k) continue;
      const src = p * bb, srcT = ts[p] * bb, dst = i * bb;
      for (let q = 0; q < bb; q++) { xuR[dst + q] = valRe[src + q]; xuI[dst + q] = valIm[src + q]; xlR[dst + q] = valRe[srcT + q]; xlI[dst + q] = valIm[srcT + q]; }
    }
    const kb = k * bb;
    for (let q = 0; q < bb; q++) { dR[q] = xuR[kb + q]; dI[q] = xuI[kb + q]; xuR[kb + q] = 0; xuI[kb + q] = 0; xlR[kb + q] = 0; xlI[kb + q] = 0; }
    for (let t = top; t < nNodes; t++) {
      const i = s[t], ib = i * bb;
      // U(i,k) = XU_i; L(k,i) = XL_i D_i⁻¹
      for (let q = 0; q < bb; q++) {
        tuR[q] = xuR[ib + q]; tuI[q] = xuI[ib + q]; xuR[ib + q] = 0; xuI[ib + q] = 0;
        const a = Math.hypot(tuR[q], tuI[q]); if (a > maxU) maxU = a;
      }
      for (let r = 0; r < b; r++) {
        for (let c = 0; c < b; c++) {
          let ar = 0, ai = 0;
          for (let m = 0; m < b; m++) {
            const xr = xlR[ib + r * b + m], xi = xlI[ib + r * b + m], yr = pivotInvRe[ib + m * b + c], yi = pivotInvIm[ib + m * b + c];
            ar += xr * yr - xi * yi; ai += xr * yi + xi * yr;
          }
          tlR[r * b + c] = ar; tlI[r * b + c] = ai;
        }
      }
      for (let q = 0; q < bb; q++) { xlR[ib + q] = 0; xlI[ib + q] = 0; }
      const end = next[i];
      for (let p = lColPtr[i]; p < end; p++) {
        const jb = index[p] * bb, pb = p * bb;
        // XU_j −= L(j,i) U(i,k);  XL_j −= L(k,i) U(i,j)
        for (let r = 0; r < b; r++) {
          for (let c = 0; c < b; c++) {
            let ur = 0, ui = 0, lr = 0, li = 0;
            for (let m = 0; m < b; m++) {
              const a1r = lowerRe[pb + r * b + m], a1i = lowerIm[pb + r * b + m], b1r = tuR[m * b + c], b1i = tuI[m * b + c];
              ur += a1r * b1r - a1i * b1i; ui += a1r * b1i + a1i * b1r;
              const a2r = tlR[r * b + m], a2i = tlI[r * b + m], b2r = upperRe[pb + m * b + c], b2i = upperIm[pb + m * b + c];
              lr += a2r * b2r - a2i * b2i; li += a2r * b2i + a2i * b2r;
            }
            const q = jb + r * b + c;
            xuR[q] -= ur; xuI[q] -= ui; xlR[q] -= lr; xlI[q] -= li;
          }
        }
      }
      for (let r = 0; r < b; r++) {
        for (let c = 0; c < b; c++) {
          let ar = 0, ai = 0;
          for (let m = 0; m < b; m++) {
            const xr = tlR[r * b + m], xi = tlI[r * b + m], yr = tuR[m * b + c], yi = tuI[m * b + c];
            ar += xr * yr - xi * yi; ai += xr * yi + xi * yr;
          }
          dR[r * b + c] -= ar; dI[r * b + c] -= ai;
        }
      }
      const p = next[i]++;
      index[p] = k;
      const pb = p * bb;
      for (let q = 0; q < bb; q++) { lowerRe[pb + q] = tlR[q]; lowerIm[pb + q] = tlI[q]; upperRe[pb + q] = tuR[q]; upperIm[pb + q] = tuI[q]; }
    }
    for (let q = 0; q < bb; q++) { const a = Math.hypot(dR[q], dI[q]); if (a > maxU) maxU = a; }
    invertComplexBlock(iR, iI, dR, dI, b);
    for (let q = 0; q < bb; q++) {
      if (!Number.isFinite(iR[q]) || !Number.isFinite(iI[q])) throw new SolverError("breakdown", `sparse complex LU: non-finite pivot block at ${k} of ${nNodes}`);
      pivotInvRe[kb + q] = iR[q]; pivotInvIm[kb + q] = iI[q];
    }
  }
  const growth = maxU / maxA;
  if (into) { into.growth = growth; return into; }
  return { nNodes, b, lColPtr, index, lowerRe, lowerIm, upperRe, upperIm, pivotInvRe, pivotInvIm, growth };
}

/** Solve A y = r in place with complex block factors; y in the new order (position P, component c at P·b + c); tmp of 2b. */
export function complexBlockLuSolveInPlace(f: ComplexBlockLu, yRe: Float64Array, yIm: Float64Array, tmp: Float64Array): void {
  const { nNodes, b, lColPtr: cp, index: ix, lowerRe: lr, lowerIm: li, upperRe: ur, upperIm: ui, pivotInvRe: dr, pivotInvIm: di } = f;
  const bb = b * b;
  for (let j = 0; j < nNodes; j++) {
    const jb = j * b, end = cp[j + 1];
    for (let p = cp[j]; p < end; p++) {
      const ib = ix[p] * b, pb = p * bb;
      for (let r = 0; r < b; r++) {
        let ar = 0, ai = 0;
        for (let m = 0; m < b; m++) {
          const xr = lr[pb + r * b + m], xi = li[pb + r * b + m], yr = yRe[jb + m], yi = yIm[jb + m];
          ar += xr * yr - xi * yi; ai += xr * yi + xi * yr;
        }
        yRe[ib + r] -= ar; yIm[ib + r] -= ai;
      }
    }
  }
  for (let j = nNodes - 1; j >= 0; j--) {
    const jb = j * b, end = cp[j + 1];
    for (let r = 0; r < b; r++) { tmp[r] = yRe[jb + r]; tmp[b + r] = yIm[jb + r]; }
    for (let p = cp[j]; p < end; p++) {
      const ib = ix[p] * b, pb = p * bb;
      for (let r = 0; r < b; r++) {
        let ar = 0, ai = 0;
        for (let m = 0; m < b; m++) {
          const xr = ur[pb + r * b + m], xi = ui[pb + r * b + m], yr = yRe[ib + m], yi = yIm[ib + m];
          ar += xr * yr - xi * yi; ai += xr * yi + xi * yr;
        }
        tmp[r] -= ar; tmp[b + r] -= ai;
      }
    }
    for (let r = 0; r < b; r++) {
      let ar = 0, ai = 0;
      for (let m = 0; m < b; m++) {
        const xr = dr[jb * b + r * b + m], xi = di[jb * b + r * b + m], yr = tmp[m], yi = tmp[b + m];
        ar += xr * yr - xi * yi; ai += xr * yi + xi * yr;
      }
      yRe[jb + r] = ar; yIm[jb + r] = ai;
    }
  }
}
