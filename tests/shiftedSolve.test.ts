import { describe, expect, it } from "vitest";
import * as math from "mathjs";
import { createRun } from "../solver/driver/run";
import { restLinearOperator } from "../solver/model/linear";
import { modalRestriction } from "../solver/model/restriction";
import { luSolve } from "../solver/linalg/dense";
import {
  blockPattern, blockPatternTransposeSlot, complexBlockLuSolveInPlace, complexBlockLuWork, complexLuSolveInPlace, complexLuWork,
  luSolveInPlace, nestedDissection, numericComplexBlockLu, numericComplexLu, numericLu, symbolicBlockLu, symbolicLu, symmetricGraph,
} from "../solver/linalg/sparseLu";
import { seededRandom } from "../solver/mesh/hexLattice";
import type { ShallowWaterModel } from "../solver/model/shallowWater";
import type { LinearOperator } from "../solver/linalg/types";
import { contourParameters } from "../solver/linalg/rational";
import type { ComplexShiftedSolver } from "../solver/model/shiftedSolve";

const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }];

function model(over: Record<string, unknown> = {}, physics: Record<string, unknown> = {}): ShallowWaterModel {
  return createRun({
    name: "solve", mesh: { type: "periodic-hex", cellsX: 6, cellsY: 6, spacing: 20000 }, layers: threeLayers,
    physics: { gravity: 9.81, f0: 7e-5, beta: 0, ...physics }, initial: { type: "rest" },
    stepper: { method: "rk4", dt: 10 }, duration: 100, ...over,
  }).model;
}
const basinWithTopography = () => model(
  { mesh: { type: "basin-hex", shape: "ellipse", width: 260000, height: 220000, spacing: 20000 } },
  { beta: 2e-11, topography: { type: "seamount", height: 1500, radius: 50000 } },
);

function randomVector(m: ShallowWaterModel, seed: number, uScale = 0.01): Float64Array {
  const rnd = seededRandom(seed);
  const { uOffset, nEdges: ne, nLayers: L, n } = m.layout;
  const v = new Float64Array(n);
  for (let q = 0; q < n; q++) v[q] = (rnd() - 0.5) * (q < uOffset ? 1 : uScale);
  for (let k = 0; k < L; k++) for (let e = 0; e < ne; e++) if (!m.mesh.edgeOpen[e]) v[uOffset + k * ne + e] = 0;
  return v;
}

/** ‖(I − γA)x − b‖ / ‖b‖ with the product taken by the operator itself. */
function residual(A: LinearOperator, x: Float64Array, b: Float64Array, gamma: number): number {
  const ax = new Float64Array(A.n);
  A.apply(ax, x);
  let r = 0, nb = 0;
  for (let q = 0; q < A.n; q++) { r += (x[q] - gamma * ax[q] - b[q]) ** 2; nb += b[q] ** 2; }
  return Math.sqrt(r / nb);
}

/** Dense I − γA (row-major) by applying A to unit vectors. */
function denseShifted(A: LinearOperator, gamma: number): Float64Array {
  const n = A.n, out = new Float64Array(n * n), e = new Float64Array(n), col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    e.fill(0); e[j] = 1;
    A.apply(col, e);
    for (let i = 0; i < n; i++) out[i * n + j] = (i === j ? 1 : 0) - gamma * col[i];
  }
  return out;
}

/** Layer volumes Σ_i A_i h_{k,i}. */
function layerVolumes(m: ShallowWaterModel, x: Float64Array): number[] {
  const { nLayers: L, nCells: nc } = m.layout;
  const v: number[] = [];
  for (let k = 0; k < L; k++) { let s = 0; for (let i = 0; i < nc; i++) s += m.mesh.cellArea[i] * x[k * nc + i]; v.push(s); }
  return v;
}

const relDiff = (a: Float64Array, b: Float64Array) => {
  let d = 0, s = 0;
  for (let i = 0; i < a.length; i++) { d = Math.max(d, Math.abs(a[i] - b[i])); s = Math.max(s, Math.abs(b[i])); }
  return d / s;
};

describe("sparse LU without pivoting (Davis 2006 up-looking factorization, nested dissection of George 1973)", () => {
  it("solves I + S (S skew, random symmetric pattern) like mathjs.lusolve", () => {
    const rnd = seededRandom(7);
    const nNodes = 60, nComp = 2;
    const pairs: [number, number][] = [];
    for (let i = 0; i < nNodes; i++) { pairs.push([i, (i + 1) % nNodes]); pairs.push([i, Math.floor(rnd() * nNodes)]); }
    const g = symmetricGraph(nNodes, (add) => { for (const [a, b] of pairs) add(a, b); });
    const order = nestedDissection(g, 8);
    expect(Array.from(order).sort((a, b) => a - b)).toEqual(Array.from({ length: nNodes }, (_, i) => i));
    const pat = blockPattern(g, order, nComp);
    const n = pat.n;
    // values: A = I + S with S skew-symmetric times 50 on the pattern (symmetric part I: no pivoting needed)
    const dense = new Float64Array(n * n);
    for (let j = 0; j < n; j++) dense[j * n + j] = 1;
    const vals = new Float64Array(pat.colPtr[n]);
    for (let j = 0; j < n; j++) for (let p = pat.colPtr[j]; p < pat.colPtr[j + 1]; p++) {
      const i = pat.rowIdx[p];
      if (i < j) { const s = 50 * (rnd() - 0.5); dense[i * n + j] = s; dense[j * n + i] = -s; }
    }
    for (let j = 0; j < n; j++) for (let p = pat.colPtr[j]; p < pat.colPtr[j + 1]; p++) vals[p] = dense[pat.rowIdx[p] * n + j];
    const sym = symbolicLu(pat, { maxFill: 1e7, maxWork: 1e10, field: "test" });
    const f = numericLu(pat, sym, vals);
    const b = Array.from({ length: n }, () => rnd() - 0.5);
    const y = Float64Array.from(b);
    luSolveInPlace(f, y);
    const rows = Array.from({ length: n }, (_, i) => Array.from(dense.subarray(i * n, (i + 1) * n)));
    const ref = (math.lusolve(rows, b) as number[][]).map((r) => r[0]);
    expect(relDiff(y, Float64Array.from(ref))).toBeLessThan(1e-11);
  });

  for (const nComp of [1, 2]) {
    it(`complex, ${nComp === 1 ? "scalar" : "2×2 blocks"}: σI − S (S skew, σ = 0.1 + 2i, near the imaginary axis) like mathjs.lusolve in complex arithmetic`, () => {
      const rnd = seededRandom(19);
      const nNodes = 50;
      const pairs: [number, number][] = [];
      for (let i = 0; i < nNodes; i++) pairs.push([i, (i + 1) % nNodes], [i, Math.floor(rnd() * nNodes)]);
      const g = symmetricGraph(nNodes, (add) => { for (const [a, c] of pairs) add(a, c); });
      const pat = blockPattern(g, nestedDissection(g, 8), nComp);
      const b = nComp, bb = b * b, n = pat.n, sr = 0.1, si = 2;
      // dense A = σI − S in the position order; S skew with entries of size up to 25 on the block pattern
      const S = new Float64Array(n * n);
      for (let P = 0; P < nNodes; P++) for (let q = pat.blockOffset[P]; q < pat.blockOffset[P + 1]; q++) {
        const Q = pat.blockIndex[q];
        for (let d = 0; d < b; d++) for (let c = 0; c < b; c++) {
          const i = Q * b + d, j = P * b + c;
          if (i < j) { const v = 50 * (rnd() - 0.5); S[i * n + j] = v; S[j * n + i] = -v; }
        }
      }
      const valRe = new Float64Array(pat.blockIndex.length * bb), valIm = new Float64Array(valRe.length);
      for (let P = 0; P < nNodes; P++) for (let q = pat.blockOffset[P]; q < pat.blockOffset[P + 1]; q++) {
        const Q = pat.blockIndex[q];
        for (let d = 0; d < b; d++) for (let c = 0; c < b; c++) {
          const i = Q * b + d, j = P * b + c;
          valRe[q * bb + d * b + c] = (i === j ? sr : 0) - S[i * n + j];
          valIm[q * bb + d * b + c] = i === j ? si : 0;
        }
      }
      const sym = symbolicBlockLu(pat, { maxFill: 1e7, maxWork: 1e10, field: "test" });
      const yRe = Float64Array.from({ length: n }, () => rnd() - 0.5), yIm = Float64Array.from({ length: n }, () => rnd() - 0.5);
      const rhs = Array.from({ length: n }, (_, i) => math.complex(yRe[i], yIm[i]));
      if (nComp === 1) {
        const f = numericComplexLu({ n, colPtr: pat.blockOffset, rowIdx: pat.blockIndex, transposeSlot: blockPatternTransposeSlot(pat) }, sym, valRe, valIm, complexLuWork(n), new Int32Array(sym.nnzL));
        complexLuSolveInPlace(f, yRe, yIm);
      } else {
        const f = numericComplexBlockLu(pat, sym, valRe, valIm, complexBlockLuWork(nNodes, b), new Int32Array(sym.nnzL));
        complexBlockLuSolveInPlace(f, yRe, yIm, new Float64Array(2 * b));
      }
      const rows = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => math.complex((i === j ? sr : 0) - S[i * n + j], i === j ? si : 0)));
      const ref = (math.lusolve(rows as never, rhs as never) as unknown as math.Complex[][]).map((r) => r[0]);
      let d = 0, m = 0;
      for (let i = 0; i < n; i++) { d = Math.max(d, Math.hypot(yRe[i] - ref[i].re, yIm[i] - ref[i].im)); m = Math.max(m, Math.hypot(ref[i].re, ref[i].im)); }
      expect(d / m).toBeLessThan(1e-10);
    });
  }

  it("refuses a factorization above its fill bound before doing it, naming the field", () => {
    const g = symmetricGraph(200, (add) => { for (let i = 0; i < 200; i++) for (let j = i + 1; j < 200; j += 7) add(i, j); });
    const pat = blockPattern(g, nestedDissection(g), 3);
    expect(() => symbolicLu(pat, { maxFill: 1000, maxWork: 1e12, field: "stepper.linear" })).toThrow(/stepper\.linear: .*bound/);
  });
});

describe("shifted solves (I − γL) x = b of the fixed linear parts", () => {
  const cases = [
    { name: "periodic, f-plane", make: () => model() },
    { name: "basin with seamount and β", make: basinWithTopography },
    // two layers: 2×2 blocks per node (the written-out 2×2 substitution), four: the general block loop
    { name: "two layers, periodic", make: () => model({ layers: threeLayers.slice(1) }) },
    { name: "four layers, periodic", make: () => model({ layers: [{ thickness: 100, density: 1024.5 }, ...threeLayers] }) },
  ];
  for (const c of cases) {
    for (const gr of [0.5, 100]) {
      it(`rest, ${c.name}, γρ = ${gr}: residual ≤ 1e-10, equals a dense LU solve (dense.ts), layer volumes exact`, () => {
        const m = c.make();
        const L = restLinearOperator(m);
        const gamma = gr / L.spectralBound;
        const b = randomVector(m, 11);
        const x = new Float64Array(m.n);
        L.solve(x, b, gamma);
        // residual against the tolerance (common practice, no source: a direct solve to ~100 ulp × growth)
        expect(residual(L, x, b, gamma)).toBeLessThan(1e-10);
        // dense Gaussian elimination with partial pivoting on the assembled I − γL
        const a = denseShifted(L, gamma), rhs = Float64Array.from(b);
        luSolve(a, rhs, m.n, 1, new Int32Array(m.n));
        expect(relDiff(x, rhs)).toBeLessThan(1e-9);
        // layer volumes: the thickness correction is a divergence (exact to round-off of the sums)
        const vb = layerVolumes(m, b), vx = layerVolumes(m, x);
        const scale = layerVolumes(m, b.map(Math.abs)).reduce((s, v) => Math.max(s, v), 0);
        for (let k = 0; k < vb.length; k++) expect(Math.abs(vx[k] - vb[k])).toBeLessThan(1e-13 * scale);
      });
    }
  }

  it("rest, small mesh: the solution equals mathjs.lusolve of the assembled system (an outside library)", () => {
    const m = model({ mesh: { type: "periodic-hex", cellsX: 4, cellsY: 4, spacing: 20000 } });
    const L = restLinearOperator(m);
    const gamma = 20 / L.spectralBound;
    const b = randomVector(m, 3);
    const x = new Float64Array(m.n);
    L.solve(x, b, gamma);
    const a = denseShifted(L, gamma);
    const rows = Array.from({ length: m.n }, (_, i) => Array.from(a.subarray(i * m.n, (i + 1) * m.n)));
    const ref = (math.lusolve(rows, Array.from(b)) as number[][]).map((r) => r[0]);
    expect(relDiff(x, Float64Array.from(ref))).toBeLessThan(1e-9);
  });

  for (const modes of [1, 2]) {
    for (const c of cases) {
      it(`modes:${modes}, ${c.name}, γρ = 100: residual of (I − γM)x = b ≤ 1e-10, dense solve agrees, layer volumes exact`, () => {
        const m = c.make();
        const r = modalRestriction(m, modes);
        const M = r.restricted;
        const gamma = 100 / r.operator.spectralBound!;
        const b = randomVector(m, 21);
        const x = new Float64Array(m.n);
        r.solve(x, b, gamma);
        expect(residual(M, x, b, gamma)).toBeLessThan(1e-10);
        const a = denseShifted(M, gamma), rhs = Float64Array.from(b);
        luSolve(a, rhs, m.n, 1, new Int32Array(m.n));
        expect(relDiff(x, rhs)).toBeLessThan(1e-9);
        const vb = layerVolumes(m, b), vx = layerVolumes(m, x);
        const scale = layerVolumes(m, b.map(Math.abs)).reduce((s, v) => Math.max(s, v), 0);
        for (let k = 0; k < vb.length; k++) expect(Math.abs(vx[k] - vb[k])).toBeLessThan(1e-13 * scale);
      });
    }
  }

  it("cost: one factorization per γ, reused; a solve costs the same number of products at γρ = 1 and 1000", () => {
    const m = model();
    const r = modalRestriction(m, 1);
    const rho = r.operator.spectralBound!;
    const b = randomVector(m, 4), x = new Float64Array(m.n);
    const counters = r.operator.counters;
    r.solve(x, b, 1 / rho); // first use: probing and factorization
    const s = r.shiftedSolver().stats;
    expect(s.factorizations).toBe(1);
    const before1 = counters.matvecs;
    r.solve(x, b, 1 / rho);
    const cost1 = counters.matvecs - before1;
    r.solve(x, b, 1000 / rho); // new γ: one more factorization
    expect(s.factorizations).toBe(2);
    const before2 = counters.matvecs;
    r.solve(x, b, 1000 / rho);
    const cost2 = counters.matvecs - before2;
    expect(s.factorizations).toBe(2);
    expect(cost2).toBeCloseTo(cost1, 12);
    expect(cost1).toBeCloseTo(s.matvecsPerSolve + 1, 12); // substitutions + the lift product
  });
});

/** ‖(σI − A)x − r‖ / ‖r‖ (complex, real and imaginary parts apart), the product taken by the operator itself. */
function complexResidual(A: LinearOperator, xr: Float64Array, xi: Float64Array, rr: Float64Array, ri: Float64Array, sr: number, si: number): number {
  const ar = new Float64Array(A.n), ai = new Float64Array(A.n);
  A.apply(ar, xr); A.apply(ai, xi);
  let d = 0, nb = 0;
  for (let q = 0; q < A.n; q++) {
    d += (sr * xr[q] - si * xi[q] - ar[q] - rr[q]) ** 2 + (si * xr[q] + sr * xi[q] - ai[q] - ri[q]) ** 2;
    nb += rr[q] ** 2 + ri[q] ** 2;
  }
  return Math.sqrt(d / nb);
}

/** Dense real form [[σr − A, −σi], [σi, σr − A]] of σI − A: rows/columns (re, im), 2n × 2n, row-major. */
function denseComplexShifted(A: LinearOperator, sr: number, si: number): Float64Array {
  const n = A.n, N = 2 * n, out = new Float64Array(N * N), e = new Float64Array(n), col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    e.fill(0); e[j] = 1;
    A.apply(col, e);
    for (let i = 0; i < n; i++) {
      const a = (i === j ? sr : 0) - col[i];
      out[i * N + j] = a; out[(n + i) * N + n + j] = a;
      if (i === j) { out[i * N + n + j] = -si; out[(n + i) * N + j] = si; }
    }
  }
  return out;
}

describe("complex shifted solves (σI − K) x = r for the poles of the rational backend", () => {
  // poles z_j/τ on the ellipse of the rational backend (Trefethen, Weideman & Schmelzer 2006), at the node nearest
  // Re z = 0 (smallest distance δ of the field of values from 0, the hardest case for LU without pivoting) and at
  // the node nearest the real axis
  const pole = (rho: number, tauRho: number, which: "imaginary" | "real") => {
    const c = contourParameters(tauRho, 1e-8);
    const j = which === "imaginary" ? Math.floor(c.nodes / 4) : 0;
    const th = (2 * Math.PI * (j + 0.5)) / c.nodes;
    const tau = tauRho / rho;
    return { sr: (c.a * Math.cos(th)) / tau, si: (c.b * Math.sin(th)) / tau };
  };
  const ops: { name: string; make: () => { op: LinearOperator; complex: () => ComplexShiftedSolver } }[] = [
    { name: "modes:1, basin with seamount and β (complex LU)", make: () => { const r = modalRestriction(basinWithTopography(), 1); return { op: r.operator, complex: () => r.shiftedSolver().complex }; } },
    { name: "modes:2, periodic (complex block LU, 2×2 blocks)", make: () => { const r = modalRestriction(model(), 2); return { op: r.operator, complex: () => r.shiftedSolver().complex }; } },
    { name: "rest, three layers, periodic (complex block LU)", make: () => { const L = restLinearOperator(model()); return { op: L.interfaceForm, complex: () => L.shiftedSolver().complex }; } },
  ];
  for (const c of ops) {
    for (const [tauRho, which] of [[10, "real"], [100, "imaginary"], [300, "imaginary"]] as const) {
      it(`${c.name}, pole of τρ = ${tauRho} nearest the ${which} axis: residual ≤ 1e-11, equals a dense LU solve (dense.ts)`, () => {
        const { op, complex } = c.make();
        const { sr, si } = pole(op.spectralBound!, tauRho, which);
        const rnd = seededRandom(17);
        const rr = Float64Array.from({ length: op.n }, () => rnd() - 0.5), ri = Float64Array.from({ length: op.n }, () => rnd() - 0.5);
        const xr = new Float64Array(op.n), xi = new Float64Array(op.n);
        const s = complex();
        s.solve(xr, xi, rr, ri, sr, si);
        // residual against the tolerance of a direct solve (common practice, no source: ~100 ulp × growth)
        expect(complexResidual(op, xr, xi, rr, ri, sr, si)).toBeLessThan(1e-11);
        // the pivots stay healthy without pivoting (sparseLu.ts; Golub & Van Loan 1979 for the bound)
        expect(s.stats.largestGrowth).toBeLessThan(100);
        // dense Gaussian elimination with partial pivoting (Golub & Van Loan 2013, §3.4) on the real 2n form
        const n = op.n, a = denseComplexShifted(op, sr, si);
        const rhs = new Float64Array(2 * n); rhs.set(rr); rhs.set(ri, n);
        luSolve(a, rhs, 2 * n, 1, new Int32Array(2 * n));
        const x = new Float64Array(2 * n); x.set(xr); x.set(xi, n);
        expect(relDiff(x, rhs)).toBeLessThan(1e-10);
      });
    }
  }

  it("one factorization per pole, reused; each solve adds its cost in products with K to the operator's counter", () => {
    const r = modalRestriction(model(), 1);
    const s = r.shiftedSolver().complex;
    const { n, counters } = r.operator;
    const rr = new Float64Array(n).fill(1), ri = new Float64Array(n), xr = new Float64Array(n), xi = new Float64Array(n);
    const rho = r.operator.spectralBound!;
    s.solve(xr, xi, rr, ri, 0.3 * rho, 1.2 * rho);
    expect(s.stats.factorizations).toBe(1);
    const before = counters.matvecs;
    s.solve(xr, xi, rr, ri, 0.3 * rho, 1.2 * rho);
    expect(s.stats.factorizations).toBe(1);
    expect(counters.matvecs - before).toBeCloseTo(s.stats.matvecsPerSolve, 12);
    // a complex solve costs 4 real substitution passes' multiply-adds: more than the real solve, less than 5×
    const real = r.shiftedSolver().stats;
    r.solve(new Float64Array(m0n(r)), new Float64Array(m0n(r)), 1 / rho);
    expect(s.stats.matvecsPerSolve / real.matvecsPerSolve).toBeGreaterThan(3);
    expect(s.stats.matvecsPerSolve / real.matvecsPerSolve).toBeLessThan(5);
    s.solve(xr, xi, rr, ri, 0.3 * rho, -1.2 * rho);
    expect(s.stats.factorizations).toBe(2);
  });

  it("beyond its memory bound the least recently used factorization is replaced, and solves stay right", () => {
    const r = modalRestriction(model(), 1);
    const probe = modalRestriction(model(), 1).shiftedSolver().complex;
    probe.reserve(1);
    const s = r.shiftedSolver({ maxComplexFill: 2.5 * probe.stats.fillPerFactorization }).complex; // room for two
    const op = r.operator, n = op.n, rho = op.spectralBound!;
    const rnd = seededRandom(8);
    const rr = Float64Array.from({ length: n }, () => rnd() - 0.5), ri = new Float64Array(n), xr = new Float64Array(n), xi = new Float64Array(n);
    const shifts: [number, number][] = [[0.5 * rho, 1.5 * rho], [0.2 * rho, -1.1 * rho], [1.3 * rho, 0.4 * rho]];
    for (const [sr, si] of [...shifts, shifts[2], shifts[0], shifts[1]]) {
      s.solve(xr, xi, rr, ri, sr, si);
      expect(complexResidual(op, xr, xi, rr, ri, sr, si)).toBeLessThan(1e-11);
    }
    // 1, 2, 3 (drops 1), 3 (kept), 1 (drops 2), 2 (drops 3): five factorizations
    expect(s.stats.capacity).toBe(2);
    expect(s.stats.factorizations).toBe(5);
  });

  it("reserve refuses a set of poles above the work or memory bound before factoring, naming the field", () => {
    const L = restLinearOperator(model());
    const s = L.shiftedSolver({ maxComplexWork: 1e6, field: "stepper.linear" }).complex;
    expect(() => s.reserve(50, "fifty poles")).toThrow(/^stepper\.linear: fifty poles needs 50 complex factorizations taking .* multiply-adds, more than the bound/);
    expect(() => s.reserve(1e9)).toThrow(/^stepper\.linear: the contour needs 1000000000 complex factorizations holding .* more than the bound/);
    expect(s.stats.factorizations).toBe(0);
  });
});

const m0n = (r: { layout: { n: number } }) => r.layout.n;
