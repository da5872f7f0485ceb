import { describe, expect, it } from "vitest";
import { createRun } from "../solver/driver/run";
import { budgetWork, layerMass, totalEnergy } from "../solver/diagnostics/budget";
import { IMEX_METHODS, createImex } from "../solver/time/imex";
import { ARS232, ARS443, IMEX_TABLES, TRAPEZOIDAL, checkImexTable, type ImexTable } from "../solver/time/imexTables";
import type { Problem } from "../solver/time/interface";
import type { ShallowWaterModel } from "../solver/model/shallowWater";
import { problemFor } from "../solver/model/problem";
import { luSolve } from "../solver/linalg/dense";
import { weightedSkewOperator } from "./linalg/fixtures";
import { createStepper } from "../solver/time/registry";

const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }];

/** 8×8 periodic cells of 20 km, three layers, f-plane with β, a 20 m bump on the first interior interface. */
function smallRun() {
  return createRun({
    name: "imex", mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 }, layers: threeLayers,
    physics: { gravity: 9.81, f0: 7e-5, beta: 1e-11 }, initial: { type: "bump", amplitude: 20, radius: 40000, interface: 1 },
    stepper: { method: "rk4", dt: 10 }, duration: 100,
  });
}

/** Classical RK4 (Kutta 1901), the reference integrator. */
function rk4(model: ShallowWaterModel, x: Float64Array, steps: number, dt: number): void {
  const n = x.length, k1 = new Float64Array(n), k2 = new Float64Array(n), k3 = new Float64Array(n), k4 = new Float64Array(n), y = new Float64Array(n);
  for (let s = 0, t = 0; s < steps; s++, t += dt) {
    model.tendency(k1, x, t); for (let q = 0; q < n; q++) y[q] = x[q] + (dt / 2) * k1[q];
    model.tendency(k2, y, t + dt / 2); for (let q = 0; q < n; q++) y[q] = x[q] + (dt / 2) * k2[q];
    model.tendency(k3, y, t + dt / 2); for (let q = 0; q < n; q++) y[q] = x[q] + dt * k3[q];
    model.tendency(k4, y, t + dt); for (let q = 0; q < n; q++) x[q] += (dt / 6) * (k1[q] + 2 * k2[q] + 2 * k3[q] + k4[q]);
  }
}

const dot = (a: readonly number[], b: readonly number[]) => a.reduce((s, x, i) => s + x * b[i], 0);
const mat = (A: readonly (readonly number[])[], v: readonly number[]) => A.map((row) => dot(row, v));

/**
 * Order conditions of an additive Runge–Kutta pair with shared nodes up to order 3 (Kennedy & Carpenter,
 * Appl. Numer. Math. 44 (2003) 139–181, §3; for one tableau Hairer, Nørsett & Wanner, Solving ODEs I, §II.2):
 * Σb = 1; Σb c = ½; Σb c² = ⅓ and Σ b^α A^β c = ⅙ for every pairing α, β of explicit and implicit.
 */
function orderDefects(t: ImexTable): number[] {
  const bs = [t.explicitB, t.implicitB], As = [t.explicitA, t.implicitA], c = t.c as number[];
  const d1 = bs.map((b) => dot(b, c.map(() => 1)) - 1);
  const d2 = bs.map((b) => dot(b, c) - 1 / 2);
  const d3 = [
    ...bs.map((b) => dot(b, c.map((x) => x * x)) - 1 / 3),
    ...bs.flatMap((b) => As.map((A) => dot(b, mat(A, c)) - 1 / 6)),
  ];
  return [Math.max(...d1.map(Math.abs)), Math.max(...d2.map(Math.abs)), Math.max(...d3.map(Math.abs))];
}

describe("IMEX tables (Ascher, Ruuth & Spiteri 1997, Appl. Numer. Math. 25, 151–167)", () => {
  it("are consistent (rows sum to c, Σb = 1, explicit strictly lower)", () => {
    for (const t of IMEX_TABLES) expect(() => checkImexTable(t)).not.toThrow();
  });

  it("ARS(2,3,2) and the trapezoidal pair satisfy the order-2 conditions and not all order-3 ones", () => {
    for (const t of [ARS232, TRAPEZOIDAL]) {
      const [d1, d2, d3] = orderDefects(t);
      expect(d1).toBeLessThan(1e-15);
      expect(d2).toBeLessThan(1e-15);
      expect(d3).toBeGreaterThan(1e-3);
    }
  });

  it("ARS(4,4,3) satisfies every order-3 condition of both tableaux and their coupling", () => {
    const [d1, d2, d3] = orderDefects(ARS443);
    expect(Math.max(d1, d2, d3)).toBeLessThan(1e-14);
  });

  it("ARS implicit parts are L-stable: R(z) = 1 + z bᵀ(I − zA)⁻¹1 → 0 as z → −∞ (stiffly accurate, a_ii > 0 after stage 0)", () => {
    for (const t of [ARS232, ARS443]) {
      // stiffly accurate: b equals the last row of the implicit tableau (the paper's construction)
      expect(t.implicitB).toEqual(t.implicitA[t.c.length - 1]);
      const z = -1e8, s = t.c.length;
      // solve (I − zA) y = 1 by forward substitution
      const y: number[] = [];
      for (let i = 0; i < s; i++) {
        let r = 1;
        for (let j = 0; j < i; j++) r += z * t.implicitA[i][j] * y[j];
        y.push(r / (1 - z * t.implicitA[i][i]));
      }
      expect(Math.abs(1 + z * dot(t.implicitB, y))).toBeLessThan(1e-6);
    }
  });

  it("a table with an explicit entry on the diagonal is refused", () => {
    const bad: ImexTable = { ...TRAPEZOIDAL, name: "bad", explicitA: [[0, 0], [0.5, 0.5]] };
    expect(() => checkImexTable(bad)).toThrow(/bad: explicit entry \(1, 1\)/);
  });
});

describe("IMEX steppers on a small 3-layer periodic mesh", () => {
  it("measured orders against an RK4 reference: ARS(2,3,2) 2, ARS(4,4,3) 3, trapezoidal 2 (the papers' orders)", () => {
    const run = smallRun();
    const model = run.model, x0 = Float64Array.from(run.state);
    const P = problemFor(model);
    const dtRk4 = (2 * Math.SQRT2) / P.rest.spectralBound; // RK4 limit on the imaginary axis (common practice, no source)
    const T = 16 * dtRk4;
    const ref = Float64Array.from(x0);
    rk4(model, ref, 16 * 64, dtRk4 / 64);
    const nh = 3 * model.layout.nCells;
    const expected: Record<string, number> = { "imex-ars232": 2, "imex-ars443": 3, "imex-trapezoidal": 2 };
    for (const def of IMEX_METHODS) {
      const errors: number[] = [];
      for (const frac of [0.5, 0.25, 0.125]) {
        const st = def.create(P, { linear: "modes:1" }, { field: "stepper" });
        const x = Float64Array.from(x0), dt = frac * dtRk4, steps = Math.round(T / dt);
        for (let s = 0; s < steps; s++) st.step(x, s * dt, dt);
        let e = 0;
        for (let q = 0; q < nh; q++) e = Math.max(e, Math.abs(x[q] - ref[q]));
        errors.push(e);
      }
      const observed = Math.log2(errors[1] / errors[2]);
      expect(observed, `${def.name} errors ${errors.map((e) => e.toExponential(2)).join(", ")}`).toBeGreaterThan(expected[def.name] - 0.25);
      expect(observed).toBeLessThan(expected[def.name] + 0.4);
    }
  });

  it("ARS(2,3,2) and ARS(4,4,3) with every mode implicit stay stable at 100× the RK4 limit for 200 steps: energy bounded, layer volumes exact", () => {
    const run = smallRun();
    const model = run.model, x0 = Float64Array.from(run.state);
    const P = problemFor(model);
    const w = budgetWork(model);
    const energy = (x: Float64Array) => { const e = totalEnergy(model, x, w); return e.kinetic + e.potential; };
    const dt = 100 * (2 * Math.SQRT2) / P.rest.spectralBound;
    const e0 = energy(x0), m0 = layerMass(model, x0);
    for (const def of IMEX_METHODS.filter((d) => d.name !== "imex-trapezoidal")) {
      for (const linear of ["rest", "modes:3"]) {
        const st = def.create(P, { linear }, { field: "stepper" });
        const x = Float64Array.from(x0);
        let eMax = 0;
        for (let s = 0; s < 200; s++) { st.step(x, s * dt, dt); eMax = Math.max(eMax, energy(x)); }
        // the fast waves are damped (L-stable implicit part), the slow flow carries on: energy stays below its start
        // value plus a few per cent (the explicit part is not energy-conserving exactly)
        expect(eMax / e0, `${def.name} linear=${linear}`).toBeLessThan(1.05);
        expect(energy(x) / e0).toBeGreaterThan(0.3);
        const m = layerMass(model, x);
        for (let k = 0; k < 3; k++) expect(Math.abs(m[k] - m0[k]) / m0[k]).toBeLessThan(1e-14);
      }
    }
  });

  it("refuses a linear part without a shifted solve, or one that is re-formed, naming stepper.linear", () => {
    const base = problemFor(smallRun().model);
    const part = base.linear("modes:1");
    const withPart = (linear: Problem["linear"]): Problem => ({
      n: base.n, layout: base.layout, newVector: base.newVector, tendency: base.tendency, counters: base.counters,
      fastSlow: undefined as never, linear,
    });
    const noSolve = withPart(() => ({ ...part, solve: undefined }));
    expect(() => createImex(ARS232, noSolve, { linear: "modes:1" }, "stepper")).toThrow(/^stepper\.linear: .*no shifted solve/);
    const reformed = withPart(() => ({ ...part, reformed: true }));
    expect(() => createImex(ARS232, reformed, { linear: "jacobian" }, "stepper")).toThrow(/^stepper\.linear: .*fixed linear part/);
  });

  it("are registered; options are validated by their declaration; solves and products are counted in matvec equivalents", () => {
    const run = smallRun();
    const problem = problemFor(run.model);
    for (const name of ["imex-ars232", "imex-ars443", "imex-trapezoidal"]) {
      expect(() => createStepper(problem, { method: name, dt: 600, linear: "modes:4" })).toThrow(/stepper\.linear/);
      expect(() => createStepper(problem, { method: name, dt: 600, substeps: 3 })).toThrow(/substeps/);
    }
    const st = createStepper(problem, { method: "imex-ars443", dt: 600 });
    expect(st.label).toBe("imex-ars443 (linear=modes:1)");
    const x = Float64Array.from(run.state);
    st.step(x, 0, 600);
    st.step(x, 600, 600);
    // ARS(4,4,3): 4 tendency evaluations, 4 solves and 5 products with A per step (the last stage's slow part is unused)
    expect(st.stats.rhsEvaluations).toBe(8);
    const solver = problem.restriction(1).shiftedSolver().stats;
    expect(solver.solves).toBe(8);
    // products: 5 per step by the engine, one lift per solve, plus the substitutions and the one factorization
    const expected = 2 * 5 + 8 * (1 + solver.matvecsPerSolve) + solver.probeProducts + solver.matvecsPerFactorization;
    expect(st.stats.matvecs).toBeCloseTo(expected, 9);
  });
});

describe("IMEX engine on a linear skew problem F(x) = A x (the slow part vanishes)", () => {
  /** A Problem whose tendency is A x with A skew-adjoint in weights W, and dense shifted solves. */
  function linearProblem(n: number, rho: number): { problem: Problem; energy: (x: Float64Array) => number } {
    const fx = weightedSkewOperator(n, 9, rho, 0);
    const a = fx.op.matrix, w = fx.weights;
    const work = new Float64Array(n * n), piv = new Int32Array(n);
    const counters = { tendencyEvaluations: 0, matvecs: 0, innerProducts: 0, phiActions: 0 };
    const part = {
      name: "rest", skew: true, spectralBound: rho, reformed: false,
      apply: (out: Float64Array, x: Float64Array) => fx.op.apply(out, x),
      linearize() {},
      phi: () => { throw new Error("unused"); },
      solve(out: Float64Array, b: Float64Array, gamma: number) {
        for (let i = 0; i < n * n; i++) work[i] = (Math.floor(i / n) === i % n ? 1 : 0) - gamma * a[i];
        out.set(b);
        luSolve(work, out, n, 1, piv);
      },
    };
    const problem: Problem = {
      n, layout: { nLayers: 1, nCells: n, nEdges: 0, thicknessOffset: 0, uOffset: n, n }, counters,
      newVector: () => new Float64Array(n),
      tendency: (out, x) => fx.op.apply(out, x),
      linear: () => part,
      fastSlow: undefined as never,
    };
    return { problem, energy: (x) => x.reduce((s, xi, i) => s + w[i] * xi * xi, 0) };
  }

  it("imex-trapezoidal is Crank–Nicolson: the weighted energy is conserved to round-off at hρ = 100 (|R(iy)| = 1)", () => {
    const { problem, energy } = linearProblem(40, 1);
    const st = createImex(TRAPEZOIDAL, problem, { linear: "rest" }, "stepper");
    const x = Float64Array.from({ length: 40 }, (_, i) => Math.sin(i + 1));
    const e0 = energy(x);
    for (let s = 0; s < 50; s++) st.step(x, 0, 100);
    expect(Math.abs(energy(x) / e0 - 1)).toBeLessThan(1e-11);
  });

  it("the ARS methods damp at hρ = 100 (L-stable implicit parts) and never increase the energy", () => {
    for (const t of [ARS232, ARS443]) {
      const { problem, energy } = linearProblem(40, 1);
      const st = createImex(t, problem, { linear: "rest" }, "stepper");
      const x = Float64Array.from({ length: 40 }, (_, i) => Math.sin(i + 1));
      let e = energy(x);
      const e0 = e;
      for (let s = 0; s < 20; s++) {
        st.step(x, 0, 100);
        const e1 = energy(x);
        expect(e1).toBeLessThanOrEqual(e * (1 + 1e-12));
        e = e1;
      }
      expect(e / e0, t.name).toBeLessThan(0.5);
    }
  });
});
