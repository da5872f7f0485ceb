import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { createRun, type Run } from "../solver/driver/run";
import { kernelsAvailable } from "../solver/kernels/wasm";
import { wasmBlockLuSolver } from "../solver/kernels/luKernel";
import { blockLuSolveInPlace, blockLuWork, blockPattern, nestedDissection, numericBlockLu, symbolicBlockLu, symmetricGraph } from "../solver/linalg/sparseLu";
import { seededRandom } from "../solver/mesh/hexLattice";
import { divergence, divergenceLoop, gradient, gradientLoop } from "../solver/mesh/operators";
import { jacobianOperator } from "../solver/model/jacobian";
import { restLinearOperator } from "../solver/model/linear";
import { problemFor } from "../solver/model/problem";
import { modalRestriction } from "../solver/model/restriction";
import { ShallowWaterModel } from "../solver/model/shallowWater";
import { pvFlux, pvFluxLoop } from "../solver/model/terms";

/*
 * The WebAssembly kernels (solver/kernels) against the TypeScript loops they replace, which the other suites
 * check against outside sources (Ringler et al. 2010, Gill 1982, Thuburn et al. 2009, dense φ-functions). Both
 * implement the same formulas in the same operation order, so they must agree to round-off (common practice, no
 * source: a second implementation of a kernel is tested against the first). Bitwise equality is not required.
 */

const LAYERS = [
  { thickness: 300, density: 1025 }, { thickness: 500, density: 1026 }, { thickness: 700, density: 1026.6 },
  { thickness: 900, density: 1027.1 }, { thickness: 2000, density: 1027.6 },
];

/**
 * A basin with a shelf (half the bottom layer's depth), β, wind, drag and both viscosities, perturbed randomly:
 * every branch of the kernels. `flat` leaves the shelf out.
 */
function basin(nLayers: number, mesh?: Record<string, unknown>, flat = false): Run {
  const layers = LAYERS.slice(0, nLayers);
  const upper = layers.slice(0, -1).reduce((s, l) => s + l.thickness, 0);
  const depth = upper + 0.5 * layers[nLayers - 1].thickness;
  const run = createRun({
    name: "kernels", mesh: mesh ?? { type: "basin-hex", shape: "ellipse", width: 260000, height: 200000, spacing: 20000 },
    layers,
    physics: { f0: 1e-4, beta: 2e-11, wind: { type: "zonal-cosine", amplitude: 0.2 }, bottomDrag: 1e-6, viscosity: 500, biharmonic: 1e10,
      ...(flat ? {} : { topography: { type: "shelf", side: "west", width: 60000, depth } }) },
    initial: { type: "bump", amplitude: 2, radius: 60000 },
    stepper: { method: "rk4", dt: 60 }, duration: 600,
  });
  const r = seededRandom(nLayers);
  const { uOffset, n } = run.model.layout;
  for (let q = 0; q < uOffset; q++) run.state[q] += 0.5 * (2 * r() - 1);
  for (let q = uOffset; q < n; q++) if (run.mesh.edgeOpen[(q - uOffset) % run.mesh.nEdges]) run.state[q] += 0.05 * (2 * r() - 1);
  return run;
}

/** The same model with the TypeScript loops. */
const reference = (run: Run) => new ShallowWaterModel(run.mesh, run.model.params, "typescript");

/** max |a − b| / max |b|. */
function relDiff(a: Float64Array, b: Float64Array): number {
  let d = 0, s = 0;
  for (let i = 0; i < b.length; i++) { d = Math.max(d, Math.abs(a[i] - b[i])); s = Math.max(s, Math.abs(b[i])); }
  return d / s;
}

const random = (n: number, seed: number) => Float64Array.from({ length: n }, (() => { const r = seededRandom(seed); return () => 2 * r() - 1; })());

describe("WebAssembly kernels", () => {
  it("run in this environment (Node has WebAssembly; the browser worker runs the same bytes)", () => {
    expect(kernelsAvailable()).toBe(true);
  });

  it("solver/kernels/binary.ts is a fresh build of solver/kernels/assembly/kernels.ts (npm run build:kernels)", () => {
    // throws (non-zero exit) when the committed binary differs from what the pinned compiler makes of the source
    execFileSync(process.execPath, ["solver/kernels/assembly/build.mjs", "--check"], { stdio: "pipe" });
  }, 60_000);

  for (const L of [1, 2, 3, 4, 5]) {
    it(`tendency with ${L} layer${L > 1 ? "s" : ""} (lane padding), basin with shelf, wind, drag, viscosity: equals the TypeScript loops to 1e-14`, () => {
      const run = basin(L);
      const a = new Float64Array(run.model.n), b = new Float64Array(run.model.n);
      run.model.tendency(a, run.state, 0);
      reference(run).tendency(b, run.state, 0);
      expect(relDiff(a, b)).toBeLessThan(1e-14);
      // thickness and velocity blocks separately (their scales differ by orders of magnitude)
      const uo = run.model.layout.uOffset;
      expect(relDiff(a.subarray(0, uo), b.subarray(0, uo))).toBeLessThan(1e-14);
      expect(relDiff(a.subarray(uo), b.subarray(uo))).toBeLessThan(1e-14);
    });
  }

  it("tendency on a jittered periodic mesh (irregular stencil widths padded): equals the TypeScript loops to 1e-14", () => {
    const run = basin(3, { type: "periodic-hex", cellsX: 10, cellsY: 8, spacing: 20000, jitter: 0.1, seed: 3 });
    const a = new Float64Array(run.model.n), b = new Float64Array(run.model.n);
    run.model.tendency(a, run.state, 0);
    reference(run).tendency(b, run.state, 0);
    expect(relDiff(a, b)).toBeLessThan(1e-14);
  });

  for (const L of [1, 2, 3, 4, 5]) {
    it(`rest-state operator and its interface form, ${L} layer${L > 1 ? "s" : ""} (lane padding): equal the TypeScript loops to 1e-14`, () => {
      const run = basin(L);
      const fast = restLinearOperator(run.model), slow = restLinearOperator(reference(run));
      const x = random(run.model.n, 7);
      const a = new Float64Array(run.model.n), b = new Float64Array(run.model.n);
      fast.apply(a, x);
      slow.apply(b, x);
      expect(relDiff(a, b)).toBeLessThan(1e-14);
      fast.interfaceForm.apply(a, x);
      slow.interfaceForm.apply(b, x);
      expect(relDiff(a, b)).toBeLessThan(1e-14);
    });
  }

  for (const [modes, topo] of [[1, true], [2, false], [2, true]] as const) {
    it(`modal operator, ${modes} mode${modes > 1 ? "s" : ""}, ${topo ? "with a shelf (coupled blocks)" : "flat bottom (diagonal blocks)"}: equals the TypeScript loops to 1e-14`, () => {
      const run = topo ? basin(3) : basin(3, { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 }, true);
      const fast = modalRestriction(run.model, modes), slow = modalRestriction(reference(run), modes);
      const y = random(fast.operator.n, 11);
      const a = new Float64Array(y.length), b = new Float64Array(y.length);
      fast.operator.apply(a, y);
      slow.operator.apply(b, y);
      expect(relDiff(a, b)).toBeLessThan(1e-14);
    });
  }

  for (const L of [1, 2, 3, 4]) {
    it(`Jacobian-vector product at a perturbed state, ${L} layer${L > 1 ? "s" : ""} (lane padding): equals the TypeScript loops to 1e-13`, () => {
      const run = basin(L);
      const fast = jacobianOperator(run.model), slow = jacobianOperator(reference(run));
      fast.setState(run.state);
      slow.setState(run.state);
      const v = random(run.model.n, 13);
      const a = new Float64Array(run.model.n), b = new Float64Array(run.model.n);
      fast.apply(a, v);
      slow.apply(b, v);
      expect(relDiff(a, b)).toBeLessThan(1e-13);
    });
  }

  it("fast/slow split on a basin (pressure, Coriolis, surface tendency, tendency split, reconcile): equals the TypeScript loops to 1e-14", () => {
    const run = basin(3);
    const fast = problemFor(run.model).fastSlow, slow = problemFor(reference(run)).fastSlow;
    const { nCells: nc, nEdges: ne } = run.mesh;
    const T = random(run.model.n, 29), eta = random(nc, 31), ub = random(ne, 37);
    for (let e = 0; e < ne; e++) if (!run.mesh.edgeOpen[e]) ub[e] = 0;
    fast.freeze(run.state);
    slow.freeze(run.state);
    const pair = (n: number) => [new Float64Array(n), new Float64Array(n)] as const;
    const [a, b] = pair(ne), [c, d] = pair(nc), [la, lb] = pair(3 * ne);
    fast.pressure(a, eta); slow.pressure(b, eta);
    expect(relDiff(a, b)).toBeLessThan(1e-14);
    fast.coriolis(a, ub); slow.coriolis(b, ub);
    expect(relDiff(a, b)).toBeLessThan(1e-14);
    fast.surfaceTendency(c, ub); slow.surfaceTendency(d, ub);
    expect(relDiff(c, d)).toBeLessThan(1e-14);
    fast.splitTendency(a, la, run.state, T); slow.splitTendency(b, lb, run.state, T);
    expect(relDiff(a, b)).toBeLessThan(1e-14);
    expect(relDiff(la, lb)).toBeLessThan(1e-14);
    const [x1, x2] = pair(run.model.n), vPrime = random(3 * ne, 41), uPrime = random(3 * ne, 43);
    fast.reconcile(x1, run.state, vPrime, ub, uPrime, ub, 60);
    slow.reconcile(x2, run.state, vPrime, ub, uPrime, ub, 60);
    expect(relDiff(x1, x2)).toBeLessThan(1e-14);
  });

  // 384 edges, and 327 (an odd count: the PV flux runs edges in pairs, the last one alone)
  for (const size of [{ width: 260000, height: 200000 }, { width: 240000, height: 180000 }]) {
    it(`gradient, divergence (with layer offsets) and PV flux on a ${size.width / 1000} km basin: equal the TypeScript loops to 1e-15`, () => {
      const m = basin(1, { type: "basin-hex", shape: "ellipse", ...size, spacing: 20000 }).mesh;
      const { nCells: nc, nEdges: ne } = m;
      const cells = random(2 * nc, 17), edges = random(2 * ne, 19), q = random(ne, 23);
      const a = new Float64Array(2 * ne), b = new Float64Array(2 * ne);
      gradient(a, m, cells, ne, nc);
      gradientLoop(b, m, cells, ne, nc);
      expect(relDiff(a, b)).toBeLessThan(1e-15);
      const c = new Float64Array(2 * nc), d = new Float64Array(2 * nc);
      divergence(c, m, edges, nc, ne);
      divergenceLoop(d, m, edges, nc, ne);
      expect(relDiff(c, d)).toBeLessThan(1e-15);
      pvFlux(a, ne, m, edges, q);
      pvFluxLoop(b, ne, m, edges, q);
      expect(relDiff(a, b)).toBeLessThan(1e-15);
    });
  }

  // the shifted solves' substitution: blocks of 1, 2 and 3 unknowns per node (modes:1, two layers, three layers)
  for (const b of [1, 2, 3]) {
    it(`sparse LU substitution with ${b}×${b} blocks: the kernel gives the TypeScript substitution's values bit for bit`, () => {
      const nNodes = 80, rnd = seededRandom(50 + b);
      const pairs: [number, number][] = [];
      for (let i = 0; i < nNodes; i++) { pairs.push([i, (i + 1) % nNodes]); pairs.push([i, Math.floor(rnd() * nNodes)]); }
      const g = symmetricGraph(nNodes, (add) => { for (const [x, y] of pairs) add(x, y); });
      const pat = blockPattern(g, nestedDissection(g, 8), b);
      // A = I + S, S skew (block (j, i) = −block (i, j)ᵀ): LU without pivoting exists (Golub & Van Loan 2013, §4.4)
      const bb = b * b, vals = new Float64Array(pat.blockOffset[nNodes] * bb), upperBlocks = new Map<string, Float64Array>();
      const n = pat.n;
      for (let j = 0; j < nNodes; j++) for (let p = pat.blockOffset[j]; p < pat.blockOffset[j + 1]; p++) {
        const i = pat.blockIndex[p], key = `${Math.min(i, j)},${Math.max(i, j)}`;
        if (!upperBlocks.has(key)) upperBlocks.set(key, Float64Array.from({ length: bb }, () => 20 * (rnd() - 0.5)));
        const blk = upperBlocks.get(key)!;
        for (let r = 0; r < b; r++) for (let m = 0; m < b; m++) {
          const sij = i === j ? (r === m ? 0 : r < m ? blk[r * b + m] : -blk[m * b + r]) : i < j ? blk[r * b + m] : -blk[m * b + r];
          vals[p * bb + r * b + m] = (i === j && r === m ? 1 : 0) + sij;
        }
      }
      const f = numericBlockLu(pat, symbolicBlockLu(pat, { maxFill: 1e7, maxWork: 1e10, field: "test" }), vals, blockLuWork(nNodes, b));
      const perm = Int32Array.from({ length: n }, (_, q) => (q * 7 + 3) % n); // any permutation (7 and n coprime)
      const c = random(n, 60 + b);
      const kernel = wasmBlockLuSolver(f, perm);
      expect(kernel).not.toBeNull();
      const viaKernel = new Float64Array(n);
      kernel!(viaKernel, c);
      const y = new Float64Array(n);
      for (let q = 0; q < n; q++) y[q] = c[perm[q]];
      blockLuSolveInPlace(f, y, new Float64Array(b));
      const viaLoops = new Float64Array(n);
      for (let q = 0; q < n; q++) viaLoops[perm[q]] = y[q];
      expect(Array.from(viaKernel)).toEqual(Array.from(viaLoops));
      expect(relDiff(viaKernel, new Float64Array(n))).toBeGreaterThan(0);
    });
  }
});
