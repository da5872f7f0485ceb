import { describe, expect, it } from "vitest";
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { createRun } from "../solver/driver/run";
import { execute } from "../solver/driver/execute";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { seededRandom } from "../solver/mesh/hexLattice";
import { listMethods } from "../solver/time/registry";
import { instantiate } from "../solver/time/instantiate";
import { imaginaryAxisBound, stabilityPolynomial } from "../solver/time/explicitRk";
import { RK4, SSPRK3 } from "../solver/time/tableaux";
import { stabilityStudy } from "../solver/studies";
import { registerModule } from "../solver/time/userModules";
import type { StepperDefinition } from "../solver/api";
import leapfrogRaw from "../public/steppers/leapfrog-raw";
import kutta3 from "../public/steppers/kutta3";
import expEulerModes from "../public/steppers/exp-euler-modes";
import splitTriangle from "../public/steppers/split-triangle";

const EXAMPLES: StepperDefinition[] = [leapfrogRaw, kutta3, expEulerModes, splitTriangle];
const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }];

describe("the stepper interface is the only wall between steppers and the model", () => {
  it("solver/time imports nothing from model/, mesh/, diagnostics/ or scenario/ (common practice, no source: a layering check)", () => {
    const dir = join(__dirname, "..", "solver", "time");
    const offenders: string[] = [];
    for (const f of readdirSync(dir)) {
      const text = readFileSync(join(dir, f), "utf8");
      if (/from\s+["']\.\.\/(model|mesh|diagnostics|scenario)\//.test(text)) offenders.push(f);
    }
    expect(offenders).toEqual([]);
  });

  it("explicit stability bounds come from the tableaux: RK4 2√2, SSPRK3 √3 on the imaginary axis (Hairer & Wanner 1996, Solving ODEs II, §IV.2)", () => {
    expect(stabilityPolynomial(RK4)).toEqual([1, 1, 1 / 2, 1 / 6, 1 / 24].map((v) => expect.closeTo(v, 15)));
    expect(imaginaryAxisBound(RK4)).toBeCloseTo(2 * Math.SQRT2, 9);
    expect(imaginaryAxisBound(SSPRK3)).toBeCloseTo(Math.sqrt(3), 9);
    // Heun's second-order method amplifies every oscillation: |R(iy)|² = 1 + y⁴/4
    expect(imaginaryAxisBound({ name: "heun", order: 2, reference: "", c: [0, 1], a: [[], [1]], b: [0.5, 0.5] })).toBe(0);
  });
});

describe("observed order of every registered method and every worked example (8×8, 3 layers, T = 1 h, reference RK4 with Δt = 1 s)", () => {
  const run = createRun({
    name: "orders", mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 }, layers: threeLayers,
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "bump", amplitude: 20, radius: 60000, interface: 1 },
    stepper: { method: "rk4", dt: 10 }, duration: 3600,
  });
  const { model, mesh, problem } = run;
  const { uOffset, nEdges: ne, nLayers: L } = model.layout;
  const x0 = Float64Array.from(run.state);
  for (let k = 0; k < L; k++) {
    for (let e = 0; e < ne; e++) x0[uOffset + k * ne + e] += (k === 0 ? 0.5 : 0.1) * Math.sin((2 * Math.PI * mesh.edgeY[e]) / mesh.height) * mesh.edgeNormalX[e];
  }
  for (let i = 0; i < mesh.nCells; i++) {
    const dx = mesh.cellX[i] - mesh.width / 2, dy = mesh.cellY[i] - mesh.height / 2;
    x0[i] += Math.exp(-(dx * dx + dy * dy) / 80000 ** 2);
  }
  const T = 3600;
  const integrate = (def: StepperDefinition, spec: Record<string, unknown>, steps: number) => {
    const st = instantiate(def, problem, { ...spec, dt: T / steps });
    const x = Float64Array.from(x0);
    for (let s = 0; s < steps; s++) st.step(x, (s * T) / steps, T / steps);
    return x;
  };
  let reference: Float64Array | undefined;
  const error = (x: Float64Array) => {
    reference ??= integrate(listMethods().find((m) => m.name === "rk4")!, {}, 3600);
    let e = 0;
    for (let i = 0; i < x.length; i++) e = Math.max(e, Math.abs(x[i] - reference[i]) / (i < uOffset ? 1 : 0.01));
    return e;
  };
  // Options a method needs to be run at all, or to be measured at its nominal order: a table for the custom
  // methods (Kutta's third-order method, Hairer, Nørsett & Wanner 1993 §II.1; ETD2RK of Cox & Matthews 2002), a fixed sub-step count for the
  // built-in sub-cycled stepper (with 40 fixed sub-steps its error is second order from T/96; the example's
  // sharpened window converges with the automatic count, measured 1.87–1.98 from T/96 to T/768), tight φ tolerances.
  const specFor: Record<string, Record<string, unknown>> = {
    "custom-rk": { tableau: { a: [[], [0.5], [-1, 2]], b: [1 / 6, 2 / 3, 1 / 6], c: [0, 0.5, 1], order: 3 } },
    "custom-exp": { phiTable: { c: [0, 1], a: [[], [[{ k: 1, coef: 1 }]]], b: [[{ k: 1, coef: 1 }, { k: 2, coef: -1 }], [{ k: 2, coef: 1 }]], order: 2 }, tolerance: 1e-12 },
    "split-explicit": { substeps: 40 },
  };
  const all = [...listMethods(), ...EXAMPLES];
  for (const def of all) {
    const exponential = /exponential/.test(def.family ?? "") || def.name === "exp-euler-modes";
    const spec = { ...(exponential ? { tolerance: 1e-12 } : {}), ...(specFor[def.name] ?? {}) };
    if (def.name === "exp-euler-modes") delete spec.tolerance;
    // explicit methods: the fast barotropic wave must be well resolved (ω_max Δt ≈ 0.1) before third-order
    // methods show their order, and leapfrog needs ω_max Δt < 1; the sub-cycled methods converge from T/96
    const subcycled = (def.family ?? "").startsWith("split") || def.name.startsWith("split");
    const [n1, n2] = exponential ? [48, 96] : subcycled ? (def.name === "split-triangle" ? [192, 384] : [96, 192]) : [384, 768];
    it(`${def.name}: measured order within 0.3 of the declared ${def.order} (h = T/${n1} → T/${n2})`, () => {
      const declared = instantiate(def, problem, { ...spec, dt: 1 }).order;
      const e1 = error(integrate(def, spec, n1)), e2 = error(integrate(def, spec, n2));
      // nominal orders: Kutta 1901 (RK4, Kutta's 3rd order), Shu & Osher 1988, Heun (Butcher 2016), Cox & Matthews 2002,
      // Krogstad 2005, Hochbruck, Lubich & Selhofer 1998, Hochbruck, Ostermann & Schweitzer 2009, Williams 2009
      // (leapfrog-RAW with α = 1/2: second order), the split-explicit pass structure (two passes: second order)
      expect(Math.abs(Math.log2(e1 / e2) - declared)).toBeLessThan(0.3);
    });
  }
});

describe("worked examples", () => {
  it("kutta3: the stability search recovers √3/ω_max within 2% on a resting periodic hexagonal mesh (any 3-stage order-3 method: Hairer & Wanner 1996, §IV.2)", () => {
    const g = 9.81, H = 1000, d = 20000;
    const s = parseScenario({
      name: "resting-hex", mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: d },
      layers: [{ thickness: H, density: 1025 }], physics: { gravity: g, f0: 0, beta: 0 },
      initial: { type: "rest" }, stepper: { method: "rk4", dt: 100 }, duration: 1e6,
    });
    const built = buildScenario(s);
    const rnd = seededRandom(11);
    for (let i = 0; i < built.mesh.nCells; i++) built.initial[i] += 1e-3 * (rnd() - 0.5);
    // ω_max = √6 √(gH)/d on the regular hexagonal mesh (Thuburn, Ringler, Skamarock & Klemp 2009, J. Comput. Phys. 228)
    const wMax = (Math.sqrt(6) * Math.sqrt(g * H)) / d;
    const key = "test:kutta3";
    registerModule(key, kutta3);
    const limit = Math.sqrt(3) / wMax;
    const [r] = stabilityStudy(built, [{ method: "kutta3", module: key }], { duration: 300 * limit, tolerance: 0.005, perturbation: 0, startDt: 0.3 * limit }, {}, "--steppers");
    expect(r.bracketed).toBe(true);
    expect(Math.abs(r.maxStableDt / limit - 1)).toBeLessThan(0.02);
  });

  for (const def of [leapfrogRaw, expEulerModes, splitTriangle]) {
    it(`${def.name}: every layer's volume is kept to round-off on a forced basin with topography (flux-form continuity; Ringler et al. 2010)`, () => {
      const key = `test:${def.name}`;
      registerModule(key, def);
      const run = createRun({
        name: "basin", mesh: { type: "basin-hex", shape: "ellipse", width: 300000, height: 240000, spacing: 20000 }, layers: threeLayers,
        physics: { gravity: 9.81, f0: 1e-4, beta: 2e-11, wind: { type: "zonal-cosine", amplitude: 0.2 }, bottomDrag: 1e-6,
          topography: { type: "seamount", height: 1500, radius: 60000 } },
        initial: { type: "bump", amplitude: 5, radius: 50000, interface: 1 }, stepper: { module: key, dt: 30 }, duration: 3000,
      });
      const r = execute(run, { steps: 40 });
      expect(r.status).toBe("completed");
      expect(r.mass.maxRelativeDrift).toBeLessThan(1e-13);
    });
  }

  it("leapfrog-raw carries its previous level through saveState/loadState: a restart continues bit for bit", () => {
    const key = "test:leapfrog-raw";
    registerModule(key, leapfrogRaw);
    const scenario = {
      name: "lf", mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 }, layers: threeLayers,
      physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "bump", amplitude: 5, radius: 60000, interface: 1 },
      stepper: { module: key, dt: 20 }, duration: 3000,
    };
    const a = createRun(scenario);
    a.advance(20);
    const b = createRun(scenario);
    b.advance(8);
    const saved = b.stepper.instance.saveState!();
    const c = createRun(scenario);
    c.state.set(b.state);
    c.time = b.time;
    c.stepper.instance.loadState!(saved);
    c.advance(12);
    expect(Buffer.from(c.state.buffer).equals(Buffer.from(a.state.buffer))).toBe(true);
  });
});

describe("φ-actions per step, counted by the problem", () => {
  it("exp-ab2 needs one φ-action per step (Cox & Matthews 2002, multistep ETD2), exponential Euler one, ETD2RK two", () => {
    const run = createRun({
      name: "phi-count", mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 }, layers: threeLayers,
      physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "bump", amplitude: 5, radius: 60000, interface: 1 },
      stepper: { method: "rk4", dt: 10 }, duration: 3600,
    });
    const perStep = (method: string) => {
      run.setStepper({ method, dt: 300, linear: "modes:1" } as Parameters<typeof run.setStepper>[0]);
      run.reset();
      return execute(run, { steps: 6 }).phiActionsPerStep;
    };
    expect(perStep("exp-ab2")).toBe(1);
    expect(perStep("exp-euler")).toBe(1);
    expect(perStep("etd2rk")).toBe(2);
    run.setStepper({ method: "rk4", dt: 10 });
    run.reset();
    expect(execute(run, { steps: 2 }).phiActionsPerStep).toBe(0);
  });
});
