import { describe, expect, it } from "vitest";
import { rationalDampedPhi, dampingFactor, dampingFrequency } from "../../solver/linalg/rationalDamped";
import { densePhi, luSolve } from "../../solver/linalg/dense";
import { phiComplexAll } from "../../solver/linalg/scalarPhi";
import type { LinearOperator } from "../../solver/linalg/types";
import { randomOrthogonal, seededRandom } from "./fixtures";

/**
 * A = Q B Qᵀ with B = blockdiag([[0, ω_i], [−ω_i, 0]]) (skew-symmetric, eigenvalues ±iω_i), with dense shifted
 * solves by Gaussian elimination (dense.ts). f(A) = Q f(B) Qᵀ and, per block, f(B_i) = Re f(iω_i) I + Im f(iω_i)/ω_i B_i
 * (B_i² = −ω_i² I; common practice, no source): an exact reference for any f.
 */
function rotationOperator(omegas: number[], seed: number) {
  const n = 2 * omegas.length;
  const q = randomOrthogonal(n, seededRandom(seed));
  const a = new Float64Array(n * n);
  // A = Q B Qᵀ
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    let s = 0;
    for (let b = 0; b < omegas.length; b++) {
      const r = 2 * b, t = 2 * b + 1, w = omegas[b];
      s += q[i * n + r] * w * q[j * n + t] - q[i * n + t] * w * q[j * n + r];
    }
    a[i * n + j] = s;
  }
  const counters = { matvecs: 0, innerProducts: 0 };
  const work = new Float64Array(n * n), piv = new Int32Array(n);
  const op: LinearOperator = {
    n, counters, skew: true, spectralBound: Math.max(...omegas),
    apply(out, x) {
      for (let i = 0; i < n; i++) { let s = 0; for (let j = 0; j < n; j++) s += a[i * n + j] * x[j]; out[i] = s; }
      counters.matvecs++;
    },
    shiftedSolve(y, c, gamma) {
      for (let i = 0; i < n * n; i++) work[i] = (Math.floor(i / n) === i % n ? 1 : 0) - gamma * a[i];
      y.set(c);
      luSolve(work, y, n, 1, piv);
    },
  };
  /** Σ_k τ^k g(ω) φ_k(iτω) applied blockwise to v[k] (g = damping or 1). */
  function reference(tau: number, v: Float64Array[], g: (omega: number) => number): Float64Array {
    const out = new Float64Array(n);
    const cr = new Float64Array(v.length), ci = new Float64Array(v.length);
    for (let k = 0; k < v.length; k++) {
      // y = Qᵀ v_k, then per block, then Q
      const y = new Float64Array(n), z = new Float64Array(n);
      for (let i = 0; i < n; i++) { let s = 0; for (let j = 0; j < n; j++) s += q[j * n + i] * v[k][j]; y[i] = s; }
      for (let b = 0; b < omegas.length; b++) {
        const w = omegas[b];
        phiComplexAll(cr, ci, k, 0, tau * w);
        const scale = Math.pow(tau, k) * g(w);
        const re = scale * cr[k], im = scale * ci[k];
        // f(B_b) = re I + (im/ω) B_b, B_b = [[0, ω], [−ω, 0]]
        z[2 * b] = re * y[2 * b] + im * y[2 * b + 1];
        z[2 * b + 1] = re * y[2 * b + 1] - im * y[2 * b];
      }
      for (let i = 0; i < n; i++) { let s = 0; for (let j = 0; j < n; j++) s += q[i * n + j] * z[j]; out[i] += s; }
    }
    return out;
  }
  return { op, reference, n };
}

const rel = (a: Float64Array, b: Float64Array) => {
  let d = 0, s = 0;
  for (let i = 0; i < a.length; i++) { d += (a[i] - b[i]) ** 2; s += b[i] ** 2; }
  return Math.sqrt(d / s);
};

describe("rational-damped φ backend (shift-and-invert Lanczos on (I − c²A²)⁻¹ with the damping σ)", () => {
  const tol = 1e-8, order = 16, strength = 36;

  it("with the whole spectrum below the cut-off it equals the dense routine (no damping to the tolerance)", () => {
    const rnd = seededRandom(3);
    const omegas = Array.from({ length: 30 }, () => 0.05 + 0.95 * rnd());
    const { op, n } = rotationOperator(omegas, 5);
    const phi = rationalDampedPhi(op, { tol, maxPhi: 2, filter: { cutoff: 1, order, strength } });
    const v = [0, 1, 2].map((k) => Float64Array.from({ length: n }, () => rnd() - 0.5 + k * 0));
    const out = new Float64Array(n), ref = new Float64Array(n);
    for (const tau of [0.5, 3]) {
      phi.apply(out, tau, v);
      densePhi(op, { tol, maxPhi: 2 }).apply(ref, tau, v);
      expect(rel(out, ref), `τ = ${tau}`).toBeLessThan(50 * tol);
    }
  });

  it("damps the waves above the cut-off by σ(iω) = exp(−κ(|ω|/ω_d)^{2p}) (exact blockwise reference), with ρ = 300 ω_c", () => {
    const rnd = seededRandom(11);
    const cutoff = 1;
    // frequencies spread over [0.02, 300]: most of the spectrum far above the cut-off
    const omegas = Array.from({ length: 40 }, (_, i) => 0.02 * Math.pow(15000, i / 39));
    const { op, reference, n } = rotationOperator(omegas, 7);
    const phi = rationalDampedPhi(op, { tol, maxPhi: 1, filter: { cutoff, order, strength } });
    const omegaD = dampingFrequency(cutoff, tol, order, strength);
    // the damping as stated: 1 − σ ≤ tol at the cut-off, σ ≤ e^{−κ} from ω_d on
    expect(1 - dampingFactor(cutoff, omegaD, order, strength)).toBeLessThanOrEqual(tol * 1.0001);
    expect(dampingFactor(omegaD, omegaD, order, strength)).toBeCloseTo(Math.exp(-strength), 25);
    const v = [0, 1].map(() => Float64Array.from({ length: n }, () => rnd() - 0.5));
    const out = new Float64Array(n);
    for (const tau of [1, 4]) {
      phi.apply(out, tau, v);
      const ref = reference(tau, v, (w) => dampingFactor(w, omegaD, order, strength));
      expect(rel(out, ref), `τ = ${tau}`).toBeLessThan(1e-6);
      // and the undamped φ differs a lot (the damping is real)
      const undamped = reference(tau, v, () => 1);
      expect(rel(undamped, ref)).toBeGreaterThan(0.1);
    }
  });

  it("its Lanczos dimension does not grow with τρ: ρ = 10 ω_c and ρ = 1000 ω_c need about the same number of steps", () => {
    const steps: number[] = [];
    for (const top of [10, 1000]) {
      const rnd = seededRandom(17);
      const omegas = Array.from({ length: 40 }, (_, i) => 0.02 * Math.pow(top / 0.02, i / 39));
      const { op, n } = rotationOperator(omegas, 19);
      const phi = rationalDampedPhi(op, { tol, maxPhi: 1, filter: { cutoff: 1, order, strength } });
      const v = [new Float64Array(n), Float64Array.from({ length: n }, () => rnd() - 0.5)];
      phi.apply(new Float64Array(n), 2, v);
      steps.push(phi.stats.substeps);
    }
    expect(steps[1]).toBeLessThanOrEqual(steps[0] + 4);
  });

  it("refuses an operator without shifted solves, or a missing cut-off, naming the field", () => {
    const { op } = rotationOperator([1, 2], 1);
    expect(() => rationalDampedPhi({ ...op, shiftedSolve: undefined }, { tol, maxPhi: 1, filter: { cutoff: 1, order, strength }, field: "stepper" })).toThrow(/^stepper\.backend: /);
    expect(() => rationalDampedPhi(op, { tol, maxPhi: 1, field: "stepper" })).toThrow(/^stepper\.filter\.cutoff: /);
  });
});

describe("rational-damped on the model's modal operator, through the sparse shifted solves", () => {
  it("modes:1 of a 3-layer periodic mesh: with the cut-off at the spectral bound it equals the dense routine", async () => {
    const { createRun } = await import("../../solver/driver/run");
    const { modalRestriction } = await import("../../solver/model/restriction");
    const { createPhiAction } = await import("../../solver/linalg/registry");
    const run = createRun({
      name: "rd", mesh: { type: "periodic-hex", cellsX: 6, cellsY: 6, spacing: 20000 },
      layers: [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }],
      physics: { gravity: 9.81, f0: 7e-5, beta: 0 }, initial: { type: "rest" }, stepper: { method: "rk4", dt: 10 }, duration: 100,
    });
    const op = modalRestriction(run.model, 1).operator;
    const rho = op.spectralBound!;
    const tol = 1e-8;
    const phi = createPhiAction("rational-damped", op, { tol, maxPhi: 2, filter: { cutoff: rho, order: 16, strength: 36 } });
    const rnd = seededRandom(23);
    const v = [new Float64Array(op.n), Float64Array.from({ length: op.n }, () => rnd() - 0.5), Float64Array.from({ length: op.n }, () => rnd() - 0.5)];
    const out = new Float64Array(op.n), ref = new Float64Array(op.n);
    const tau = 20 / rho;
    phi.apply(out, tau, v);
    densePhi(op, { tol, maxPhi: 2 }).apply(ref, tau, v);
    // energy-weighted relative difference (the operator is skew in its weights)
    const w = op.weights!;
    let d = 0, s = 0;
    for (let i = 0; i < op.n; i++) { d += w[i] * (out[i] - ref[i]) ** 2; s += w[i] * ref[i] ** 2; }
    expect(Math.sqrt(d / s)).toBeLessThan(100 * tol);
  });
});
