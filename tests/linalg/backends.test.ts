import { describe, expect, it } from "vitest";
import { createPhiAction, phiBackends } from "../../solver/linalg/registry";
import { densePhi } from "../../solver/linalg/dense";
import type { PhiBackendName } from "../../solver/linalg/types";
import { seededRandom, weightedSkewOperator } from "./fixtures";
import { mathjsPhiCombination, relativeError } from "./reference";
import { applyAtTimes } from "../../solver/linalg/phiTimes";

// Random 30×30 operator, skew-adjoint in a diagonal weighted inner product, eigenvalues ±iω with
// max ω = ρ = 1 and two zero eigenvalues (spectrum known by construction, fixtures.ts).
const fx = weightedSkewOperator(30, 5, 1, 2);
const n = fx.op.n;
const rnd = seededRandom(3);
const randomVectors = [0, 1, 2, 3].map(() => Float64Array.from({ length: n }, () => 2 * rnd() - 1));
const zero = new Float64Array(n);

// cases: pure exponential, increment form with φ_1, increment form with φ_1..φ_3
const cases: { name: string; v: Float64Array[] }[] = [
  { name: "e^{τA} v0", v: [randomVectors[0]] },
  { name: "τ φ1 v1", v: [zero, randomVectors[1]] },
  { name: "Σ_{k≤3} τ^k φ_k v_k", v: [zero, randomVectors[1], randomVectors[2], randomVectors[3]] },
];
const tauRhos = [0.1, 1.53, 7.67, 38.4, 200];
const TOL = 1e-8;

// independent reference: mathjs expm of the augmented matrix (reference.ts)
const refs = new Map<string, Float64Array>();
for (const c of cases) for (const tr of tauRhos) refs.set(`${c.name}@${tr}`, mathjsPhiCombination(fx.op.matrix, n, tr / fx.rho, c.v));

const iterative: PhiBackendName[] = ["krylov", "taylor", "chebyshev", "substep", "rational"];

describe("every backend reproduces Σ τ^k φ_k(τA) v_k on a weighted-skew 30×30 operator", () => {
  for (const backend of iterative) {
    for (const c of cases) {
      it(`${backend}: ${c.name}, τρ = ${tauRhos.join(", ")}: within 10·tol of mathjs expm (augmented matrix) and of densePhi`, () => {
        const action = createPhiAction(backend, fx.op, { tol: TOL, maxPhi: 3 });
        const dense = densePhi(fx.op, { tol: TOL, maxPhi: 3 });
        const out = new Float64Array(n), dref = new Float64Array(n);
        for (const tr of tauRhos) {
          if (backend === "rational" && tr === 200 && c.v.length !== 2) continue; // cost: one large case suffices
          const tau = tr / fx.rho;
          action.apply(out, tau, c.v);
          dense.apply(dref, tau, c.v);
          const ref = refs.get(`${c.name}@${tr}`)!;
          expect(relativeError(dref, ref, fx.weights)).toBeLessThan(1e-11); // the two dense routes agree
          expect(relativeError(out, ref, fx.weights), `${backend} τρ=${tr}`).toBeLessThan(10 * TOL);
          expect(relativeError(out, dref, fx.weights)).toBeLessThan(10 * TOL);
        }
      });
    }
  }
});

describe("mass-like invariant: ℓᵀA = 0 and ℓᵀv_k = 0 imply ℓᵀ out = 0", () => {
  // ℓᵀ φ_k(τA) = ℓᵀ/k!, so ℓᵀ out = Σ τ^k ℓᵀv_k / k! (series definition, Hochbruck & Ostermann 2010)
  const l = fx.leftNull;
  const project = (x: Float64Array) => {
    let a = 0, b = 0;
    for (let i = 0; i < n; i++) { a += l[i] * x[i]; b += l[i] * l[i]; }
    return x.map((xi, i) => xi - (a / b) * l[i]);
  };
  const v = [zero, project(randomVectors[1]), project(randomVectors[2])];
  for (const backend of iterative) {
    it(`${backend}: |ℓᵀ out| ≤ 1e-12 ‖ℓ‖‖out‖ at τρ = 38.4`, () => {
      const action = createPhiAction(backend, fx.op, { tol: TOL, maxPhi: 2 });
      const out = new Float64Array(n);
      action.apply(out, 38.4, v);
      let lo = 0, ll = 0, oo = 0;
      for (let i = 0; i < n; i++) { lo += l[i] * out[i]; ll += l[i] ** 2; oo += out[i] ** 2; }
      expect(Math.abs(lo)).toBeLessThan(1e-12 * Math.sqrt(ll * oo));
      // and a v with a non-zero ℓ-component keeps ℓᵀ out = τ ℓᵀ v_1 exactly (φ_1(0) = 1)
      const w = [zero, randomVectors[1]];
      action.apply(out, 0.5, w);
      let lv = 0; lo = 0;
      for (let i = 0; i < n; i++) { lo += l[i] * out[i]; lv += l[i] * randomVectors[1][i]; }
      expect(Math.abs(lo - 0.5 * lv)).toBeLessThan(1e-12 * Math.sqrt(ll * oo));
    });
  }
});

describe("work counters", () => {
  for (const backend of iterative) {
    it(`${backend}: stats.matvecs equals the operator's own count; inner products reported (0 for chebyshev and substep)`, () => {
      const action = createPhiAction(backend, fx.op, { tol: TOL, maxPhi: 3 });
      const out = new Float64Array(n);
      const mv0 = fx.op.counters.matvecs, ip0 = fx.op.counters.innerProducts;
      action.apply(out, 7.67, cases[1].v);
      expect(action.stats.matvecs).toBe(fx.op.counters.matvecs - mv0);
      expect(action.stats.matvecs).toBeGreaterThan(0);
      expect(action.stats.innerProducts).toBe(fx.op.counters.innerProducts - ip0);
      if (backend === "chebyshev" || backend === "substep") expect(action.stats.innerProducts).toBe(0);
      else expect(action.stats.innerProducts).toBeGreaterThan(0);
    });
  }
});

describe("registry", () => {
  it("lists every backend name once with a description", () => {
    const names = phiBackends.map((b) => b.name).sort();
    expect(names).toEqual(["chebyshev", "dense", "krylov", "rational", "rational-damped", "substep", "taylor"]);
    for (const b of phiBackends) expect(b.description.length).toBeGreaterThan(20);
  });
  const expectBadInput = (f: () => unknown, field: string) => {
    try { f(); } catch (e) {
      const err = e as { code?: string; field?: string; name?: string };
      expect(err.name).toBe("SolverError");
      expect(err.code).toBe("bad-input");
      expect(err.field).toBe(field);
      return;
    }
    throw new Error(`expected a SolverError for ${field}`);
  };
  it("rejects bad options with SolverError(bad-input) naming the field", () => {
    expectBadInput(() => createPhiAction("krylov", fx.op, { tol: 0, maxPhi: 1 }), "phi.tolerance");
    expectBadInput(() => createPhiAction("krylov", fx.op, { tol: -1e-8, maxPhi: 1 }), "phi.tolerance");
    expectBadInput(() => createPhiAction("krylov", fx.op, { tol: NaN, maxPhi: 1 }), "phi.tolerance");
    expectBadInput(() => createPhiAction("krylov", fx.op, { tol: 1e-8, maxPhi: -1 }), "phi.maxPhi");
    expectBadInput(() => createPhiAction("nope" as PhiBackendName, fx.op, { tol: 1e-8, maxPhi: 1 }), "phi.backend");
    const plain = { n, counters: { matvecs: 0, innerProducts: 0 }, apply: fx.op.apply };
    expectBadInput(() => createPhiAction("chebyshev", plain, { tol: 1e-8, maxPhi: 1 }), "phi.backend");
    expectBadInput(() => createPhiAction("rational", plain, { tol: 1e-8, maxPhi: 1 }), "phi.backend");
    expectBadInput(() => createPhiAction("chebyshev", { ...plain, spectralBound: 1 }, { tol: 1e-8, maxPhi: 1 }), "phi.backend");
    expectBadInput(() => createPhiAction("substep", plain, { tol: 1e-8, maxPhi: 1 }), "phi.backend");
    expectBadInput(() => createPhiAction("krylov", fx.op, { tol: 1e-8, maxPhi: 1, filter: { cutoff: 1, order: 8, strength: 36 } }), "phi.filter");
    expectBadInput(() => createPhiAction("chebyshev", fx.op, { tol: 1e-8, maxPhi: 1, filter: { cutoff: 0, order: 8, strength: 36 } }), "phi.filter.cutoff");
    // a caller names its own field prefix, e.g. the stepper's options
    expectBadInput(() => createPhiAction("krylov", fx.op, { tol: 0, maxPhi: 1, field: "stepper" }), "stepper.tolerance");
  });
});

describe("one vector set at several times (applyTimes): one basis for every τ", () => {
  // Saad 1992 (SIAM J. Numer. Anal. 29, 209–228): K_m(A, v) does not depend on τ, so φ_k(τA)v ≈ β V φ_k(τH) e_1 for
  // every τ from one space; Tal-Ezer & Kosloff 1984: the Chebyshev vectors P_j(A)v do not depend on τ either.
  // Reference: mathjs expm of the augmented matrix at each τ (reference.ts), independent of the backends.
  const times = [38.4, 1.53, 19.2, 38.4, 0]; // unsorted, a repeat and τ = 0 on purpose
  for (const backend of ["krylov", "chebyshev", "taylor"] as PhiBackendName[]) {
    for (const c of cases) {
      it(`${backend}: ${c.name} at τρ = ${times.join(", ")}: each within 10·tol of mathjs expm${backend === "taylor" ? " (fallback: one apply per τ)" : ", no more matvecs than one call per τ"}`, () => {
        const action = createPhiAction(backend, fx.op, { tol: TOL, maxPhi: 3 });
        const outs = times.map(() => new Float64Array(n));
        const taus = times.map((tr) => tr / fx.rho);
        const mv0 = fx.op.counters.matvecs;
        applyAtTimes(action, outs, taus, c.v);
        const shared = fx.op.counters.matvecs - mv0;
        if (backend !== "taylor") expect(action.applyTimes).toBeDefined();
        let separate = 0;
        const one = new Float64Array(n);
        times.forEach((tr, i) => {
          if (tr === 0) expect(Array.from(outs[i])).toEqual(Array.from(c.v[0])); // φ_0(0) = I, τ^k = 0 for k ≥ 1
          else expect(relativeError(outs[i], mathjsPhiCombination(fx.op.matrix, n, taus[i], c.v), fx.weights), `${backend} τρ=${tr}`).toBeLessThan(10 * TOL);
          const m0 = fx.op.counters.matvecs;
          action.apply(one, taus[i], c.v);
          separate += fx.op.counters.matvecs - m0;
          if (tr !== 0) expect(relativeError(outs[i], one, fx.weights)).toBeLessThan(10 * TOL);
        });
        if (backend === "taylor") expect(shared).toBe(separate);
        // chebyshev with several non-zero v_k forms P_j(A) v_k per k only when that is cheaper than one sum per τ
        else if (backend === "chebyshev" && c.v.length > 2) expect(shared).toBeLessThanOrEqual(separate);
        else expect(shared).toBeLessThan(separate);
      });
    }
  }

  it("krylov with a capped basis (maxDim 20, τρ up to 60: sub-steps): times inside every sub-step within 10·tol of mathjs expm", () => {
    const action = createPhiAction("krylov", fx.op, { tol: TOL, maxPhi: 3, maxKrylovDim: 20 });
    const trs = [3, 17.5, 31, 44.2, 60];
    const outs = trs.map(() => new Float64Array(n));
    const v = cases[2].v;
    action.applyTimes!(outs, trs.map((tr) => tr / fx.rho), v);
    expect(action.stats.substeps).toBeGreaterThan(1);
    trs.forEach((tr, i) => expect(relativeError(outs[i], mathjsPhiCombination(fx.op.matrix, n, tr / fx.rho, v), fx.weights), `τρ=${tr}`).toBeLessThan(10 * TOL));
  });

  it("refuses more times than outputs with the field named", () => {
    const action = createPhiAction("krylov", fx.op, { tol: TOL, maxPhi: 3 });
    expect(() => action.applyTimes!([new Float64Array(n)], [1, 2], cases[1].v)).toThrow(/phi\.applyTimes|outputs/);
  });
});
