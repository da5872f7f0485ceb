import { describe, expect, it } from "vitest";
import { createRun } from "../../solver/driver/run";
import { createStepper } from "../../solver/time/registry";
import { problemFor } from "../../solver/model/problem";
import { restLinearOperator } from "../../solver/model/linear";
import { modalRestriction } from "../../solver/model/restriction";
import { contourParameters, rationalPhi, type RationalStats } from "../../solver/linalg/rational";
import { densePhi } from "../../solver/linalg/dense";
import { seededRandom } from "../../solver/mesh/hexLattice";
import type { LinearOperator } from "../../solver/linalg/types";
import type { ShallowWaterModel } from "../../solver/model/shallowWater";

/**
 * The rational φ backend on the fixed linear parts with their complex shifted solves (a sparse LU per pole):
 * trapezoid rule on an ellipse around the imaginary spectral segment (Trefethen, Weideman & Schmelzer 2006,
 * BIT 46, 653–670), checked against the dense φ routine (dense.ts: the augmented-matrix exponential of
 * Al-Mohy & Higham 2011 by scaling and squaring with Padé, Higham 2005).
 */
const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }];
const oneLayer = [{ thickness: 4000, density: 1025 }];

function model(layers: unknown[], mesh: Record<string, unknown> = { type: "periodic-hex", cellsX: 6, cellsY: 6, spacing: 20000 }, physics: Record<string, unknown> = {}): ShallowWaterModel {
  return createRun({
    name: "rational", mesh, layers, physics: { gravity: 9.81, f0: 7e-5, beta: 0, ...physics }, initial: { type: "rest" },
    stepper: { method: "rk4", dt: 10 }, duration: 100,
  }).model;
}

function energyError(a: Float64Array, b: Float64Array, w: Float64Array): number {
  let d = 0, s = 0;
  for (let i = 0; i < a.length; i++) { d += w[i] * (a[i] - b[i]) ** 2; s += w[i] * b[i] ** 2; }
  return Math.sqrt(d / s);
}

function vectors(op: LinearOperator, seed: number): Float64Array[] {
  const rnd = seededRandom(seed);
  const v = [0, 1, 2].map(() => Float64Array.from({ length: op.n }, () => 2 * rnd() - 1));
  v[0].fill(0); // increment form, as the steppers call it
  return v;
}

const TOL = 1e-8;
const operators: { name: string; make: () => LinearOperator; hRhos: number[] }[] = [
  { name: "rest, one layer (complex LU)", make: () => restLinearOperator(model(oneLayer)).interfaceForm, hRhos: [10, 100] },
  // three components per node: 4× the flops of the real factorization per pole; one case
  { name: "rest, three layers (complex block LU)", make: () => restLinearOperator(model(threeLayers)).interfaceForm, hRhos: [10] },
  { name: "modes:1 on three layers, basin with β (complex LU)", make: () => modalRestriction(model(threeLayers, { type: "basin-hex", shape: "ellipse", width: 260000, height: 220000, spacing: 20000 }, { beta: 2e-11 }), 1).operator, hRhos: [10, 100] },
];

describe("rational backend with direct complex shifted solves", () => {
  for (const c of operators) {
    for (const hRho of c.hRhos) {
      it(`${c.name}, hρ = ${hRho}, tol 1e-8: within 10·tol of the dense φ routine; factorizations reused on the next call`, () => {
        const op = c.make();
        const rho = op.spectralBound!;
        const tau = hRho / rho;
        const v = vectors(op, 5);
        const phi = rationalPhi(op, { tol: TOL, maxPhi: 2 });
        const stats = phi.stats as RationalStats;
        expect(stats.solver).toBe("direct");
        const out = new Float64Array(op.n), ref = new Float64Array(op.n);
        densePhi(op, { tol: TOL, maxPhi: 2 }).apply(ref, tau, v);
        const solver = op.complexShiftedSolver!() as unknown as { stats: { factorizations: number; solves: number; matvecsPerSolve: number; largestGrowth: number } };
        const f0 = solver.stats.factorizations;
        phi.apply(out, tau, v);
        // the error target of the contour (10·tol: the tolerance is met by each of the two quadrature error terms, rational.ts)
        expect(energyError(out, ref, op.weights!)).toBeLessThan(10 * TOL);
        const poles = contourParameters(hRho, TOL).nodes / 2; // conjugate symmetry: N/2 solves
        expect(stats.substeps).toBe(poles);
        expect(solver.stats.factorizations - f0).toBe(poles);
        // a second call at the same τ: no new factorization; cost = poles × (solve + residual products) + refinements
        const s0 = solver.stats.solves;
        phi.apply(out, tau, v);
        expect(solver.stats.factorizations - f0).toBe(poles);
        expect(energyError(out, ref, op.weights!)).toBeLessThan(10 * TOL);
        const solves = solver.stats.solves - s0;
        expect(solves).toBe(poles + stats.refinements);
        expect(stats.matvecs).toBeCloseTo(solves * solver.stats.matvecsPerSolve + 2 * (poles + stats.refinements), 6);
        // element growth of the LU without pivoting stays moderate (sparseLu.ts: bounded in terms of ‖K‖/δ, Golub &
        // Van Loan 1979; observed 1 to 7 up to hρ = 300; the limit 100 is common practice, no source)
        expect(solver.stats.largestGrowth).toBeLessThan(100);
        expect(stats.errorEstimate).toBeLessThan(1e-9);
      });
    }
  }

  it("agrees with the GMRES route of the same backend (direct: false) to the tolerance", () => {
    const op = restLinearOperator(model(oneLayer)).interfaceForm;
    const tau = 10 / op.spectralBound!;
    const v = vectors(op, 7);
    const a = new Float64Array(op.n), b = new Float64Array(op.n);
    rationalPhi(op, { tol: TOL, maxPhi: 2 }).apply(a, tau, v);
    const g = rationalPhi(op, { tol: TOL, maxPhi: 2, direct: false });
    g.apply(b, tau, v);
    expect((g.stats as RationalStats).solver).toBe("gmres");
    expect(energyError(a, b, op.weights!)).toBeLessThan(10 * TOL);
  });

  it("refuses a contour whose factorizations exceed the memory bound before factoring any, naming the field", () => {
    const rest = restLinearOperator(model(oneLayer));
    const s = rest.shiftedSolver({ maxComplexFill: 1e5 });
    const phi = rationalPhi(rest.interfaceForm, { tol: TOL, maxPhi: 2, field: "stepper" });
    const v = vectors(rest.interfaceForm, 3);
    const out = new Float64Array(rest.n);
    expect(() => phi.apply(out, 100 / rest.spectralBound, v)).toThrow(/^stepper\.linear: the rational backend \(stepper\.backend\) at τρ = 100 needs \d+ complex factorizations/);
    expect(s.complex.stats.factorizations).toBe(0);
  });

  it("etdrk4 with linear rest and backend rational keeps layer volumes to round-off on a basin (increment form)", () => {
    const run = createRun({
      name: "rational", mesh: { type: "basin-hex", shape: "ellipse", width: 260000, height: 220000, spacing: 20000 }, layers: threeLayers,
      physics: { gravity: 9.81, f0: 7e-5, beta: 2e-11, topography: { type: "seamount", height: 1500, radius: 50000 }, wind: { type: "zonal-cosine", amplitude: 0.1 }, bottomDrag: 1e-6 },
      initial: { type: "bump", amplitude: 2, radius: 50000, interface: 0 }, stepper: { method: "rk4", dt: 10 }, duration: 3600,
    });
    const { nLayers: L, nCells: nc } = run.model.layout;
    const area = run.mesh.cellArea;
    const volumes = (x: Float64Array) => Array.from({ length: L }, (_, k) => { let s = 0; for (let i = 0; i < nc; i++) s += area[i] * x[k * nc + i]; return s; });
    const m0 = volumes(run.state);
    const dt = 10 * run.rk4DtLimit();
    const st = createStepper(run.problem, { method: "etdrk4", linear: "rest", backend: "rational", tolerance: 1e-8 });
    const x = Float64Array.from(run.state);
    st.step(x, 0, dt);
    // the poles of the two step sizes of etdrk4 (h/2 and h) are factored in the first step, then reused
    const cs = problemFor(run.model).rest.shiftedSolver().complex.stats;
    const rho = problemFor(run.model).rest.spectralBound;
    const poles = contourParameters(dt * rho, 1e-8).nodes / 2 + contourParameters((dt / 2) * rho, 1e-8).nodes / 2;
    expect(cs.factorizations).toBe(poles);
    for (let s = 1; s < 3; s++) st.step(x, s * dt, dt);
    expect(cs.factorizations).toBe(poles);
    const m1 = volumes(x);
    // Hochbruck & Ostermann 2010: increment form, φ-actions act on tendencies whose thickness parts are divergences
    for (let k = 0; k < L; k++) expect(Math.abs(m1[k] / m0[k] - 1)).toBeLessThan(1e-13);
    for (const v of x) expect(Number.isFinite(v)).toBe(true);
    expect(st.stats.matvecs).toBeGreaterThan(0);
  });
});
