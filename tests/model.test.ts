import { describe, expect, it } from "vitest";
import { createRun, Run } from "../solver/driver/run";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { seededRandom } from "../solver/mesh/hexLattice";
import { verticalModes } from "../solver/model/modes";
import type { ShallowWaterModel } from "../solver/model/shallowWater";

/** A scenario object with overrides (tests use small meshes). */
function scenario(over: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    name: "test",
    mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
    layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "rest" },
    stepper: { method: "rk4", dt: 30 },
    duration: 3600,
    ...over,
  };
}

const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.5 }, { thickness: 3000, density: 1027.5 }];

/** dE/dt of the semi-discrete system from the tendencies, and the sum of the magnitudes of its terms. */
function energyTendency(model: ShallowWaterModel, x: Float64Array): { rate: number; scale: number } {
  const m = model.mesh;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  const g = model.params.reducedGravity;
  const dx = new Float64Array(model.n);
  model.tendency(dx, x, 0);
  let rate = 0;
  let scale = 0;
  // Bernoulli function B_k = K_k + M_k at cells
  const eta = new Float64Array(L * nc);
  for (let i = 0; i < nc; i++) {
    let level = model.params.bottom[i];
    for (let k = L - 1; k >= 0; k--) { level += x[k * nc + i]; eta[k * nc + i] = level; }
  }
  for (let k = 0; k < L; k++) {
    for (let i = 0; i < nc; i++) {
      let M = 0;
      for (let j = 0; j <= k; j++) M += g[j] * eta[j * nc + i];
      let K = 0;
      for (let q = m.cellEdgeOffset[i]; q < m.cellEdgeOffset[i + 1]; q++) {
        const e = m.cellEdgeIndex[q];
        K += m.edgeLength[e] * m.edgeCellDistance[e] * x[uOffset + k * ne + e] ** 2;
      }
      K /= 4 * m.cellArea[i];
      const term = m.cellArea[i] * (K + M) * dx[k * nc + i];
      rate += term;
      scale += Math.abs(term);
    }
    for (let e = 0; e < ne; e++) {
      const c1 = m.edgeCells[2 * e];
      const c2 = m.edgeCells[2 * e + 1];
      if (c2 < 0) continue;
      const F = 0.5 * (x[k * nc + c1] + x[k * nc + c2]) * x[uOffset + k * ne + e];
      const term = m.edgeLength[e] * m.edgeCellDistance[e] * F * dx[uOffset + k * ne + e];
      rate += term;
      scale += Math.abs(term);
    }
  }
  return { rate, scale };
}

function perturb(run: Run, seed: number, dh: number, du: number): void {
  const r = seededRandom(seed);
  const { uOffset, n } = run.model.layout;
  for (let q = 0; q < uOffset; q++) run.state[q] += dh * (2 * r() - 1);
  for (let q = uOffset; q < n; q++) if (run.mesh.edgeOpen[(q - uOffset) % run.mesh.nEdges]) run.state[q] += du * (2 * r() - 1);
}

describe("conservation", () => {
  it("layer volumes are conserved to round-off on a basin with topography, wind and drag (flux-form continuity; Ringler et al. 2010)", () => {
    const run = createRun(scenario({
      mesh: { type: "basin-hex", shape: "ellipse", width: 400000, height: 300000, spacing: 20000 },
      layers: threeLayers,
      physics: { f0: 1e-4, beta: 2e-11, wind: { type: "zonal-cosine", amplitude: 0.2 }, bottomDrag: 1e-6, viscosity: 500, biharmonic: 1e10,
        topography: { type: "shelf", side: "west", width: 60000, depth: 1500 } },
      initial: { type: "bump", amplitude: 2, radius: 60000 },
      stepper: { method: "rk4", dt: 60 },
    }));
    const m0 = run.budget().mass;
    expect(run.advance(100)).toBe(true);
    const m1 = run.budget().mass;
    m0.forEach((v, k) => expect(Math.abs(m1[k] - v) / v).toBeLessThan(1e-13));
  });

  for (const [name, mesh] of [
    ["regular periodic mesh", { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 }],
    ["jittered periodic mesh", { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000, jitter: 0.1, seed: 5 }],
    ["polygon basin", { type: "basin-hex", shape: "polygon", vertices: [[0, 0], [300000, 0], [260000, 200000], [40000, 240000]], spacing: 20000 }],
  ] as const) {
    it(`${name}: the semi-discrete energy tendency of the unforced inviscid 3-layer system vanishes to round-off, with topography and β (Ringler et al. 2010)`, () => {
      const run = createRun(scenario({
        mesh, layers: threeLayers,
        physics: { f0: 1e-4, beta: 2e-11, topography: { type: "seamount", height: 1500, radius: 60000 } },
      }));
      perturb(run, 11, 20, 0.5);
      const { rate, scale } = energyTendency(run.model, run.state);
      expect(scale).toBeGreaterThan(0);
      expect(Math.abs(rate) / scale).toBeLessThan(1e-13);
    });
  }

  it("wind stress does work Σ l d τ_e u_e / ρ0 on the top layer and nothing else (energy budget, Ringler et al. 2010)", () => {
    const run = createRun(scenario({
      mesh: { type: "basin-hex", shape: "rectangle", width: 300000, height: 240000, spacing: 20000 },
      layers: threeLayers, physics: { f0: 1e-4, beta: 2e-11, wind: { type: "zonal-cosine", amplitude: 0.15 } },
    }));
    perturb(run, 21, 1, 0.1);
    const m = run.mesh;
    const tau = run.model.params.windStress!;
    // a top-layer flow partly along the wind, so that the wind does clear work
    for (let e = 0; e < m.nEdges; e++) run.state[run.model.layout.uOffset + e] += 2 * tau[e];
    const { rate, scale } = energyTendency(run.model, run.state);
    let work = 0;
    for (let e = 0; e < m.nEdges; e++) work += (m.edgeLength[e] * m.edgeCellDistance[e] * tau[e] * run.state[run.model.layout.uOffset + e]) / run.model.params.rho0;
    expect(work).toBeGreaterThan(1e-5 * scale);
    expect(Math.abs(rate - work) / scale).toBeLessThan(1e-13);
  });

  it("the vector Laplacian dissipates: Σ l d u ∇²u = −Σ A δ² − Σ A_v ζ² (Ringler et al. 2010)", async () => {
    const { vectorLaplacian } = await import("../solver/model/terms");
    const { divergence, curl } = await import("../solver/mesh/operators");
    const run = createRun(scenario({ mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000, jitter: 0.08, seed: 2 } }));
    perturb(run, 4, 0, 1);
    const m = run.mesh;
    const u = run.state.subarray(run.model.layout.uOffset, run.model.layout.uOffset + m.nEdges);
    const lap = new Float64Array(m.nEdges);
    vectorLaplacian(lap, m, u, 0, new Float64Array(m.nCells), new Float64Array(m.nVertices));
    const div = new Float64Array(m.nCells);
    const vort = new Float64Array(m.nVertices);
    divergence(div, m, u);
    curl(vort, m, u);
    let lhs = 0;
    for (let e = 0; e < m.nEdges; e++) lhs += m.edgeLength[e] * m.edgeCellDistance[e] * u[e] * lap[e];
    let rhs = 0;
    for (let i = 0; i < m.nCells; i++) rhs -= m.cellArea[i] * div[i] ** 2;
    for (let v = 0; v < m.nVertices; v++) rhs -= m.vertexArea[v] * vort[v] ** 2;
    expect(lhs).toBeLessThan(0);
    expect(Math.abs(lhs - rhs) / Math.abs(rhs)).toBeLessThan(1e-12);
  });

  it("the energy tendency is negative with drag and viscosity (dissipation identity, Ringler et al. 2010)", () => {
    const run = createRun(scenario({ layers: threeLayers, physics: { f0: 1e-4, bottomDrag: 1e-5, viscosity: 1000 } }));
    perturb(run, 3, 5, 0.3);
    const { rate, scale } = energyTendency(run.model, run.state);
    expect(rate).toBeLessThan(-1e-6 * scale);
  });
});

describe("balance and waves", () => {
  it("a discretely balanced geostrophic state is a steady state of the linear f-plane system (Thuburn et al. 2009)", () => {
    // Linear response L δ by a central difference of the full tendency about the rest state: error O(ε²) from
    // truncation plus round-off/ε; at ε = 0.1 (0.1 m interface displacement) round-off dominates at ~1e-8.
    const built = buildScenario(parseScenario(scenario({ initial: { type: "balanced", amplitude: 1, radius: 60000, interface: 1 } })));
    const model = built.model;
    const rest = model.restState();
    const delta = Float64Array.from(built.initial, (v, q) => v - rest[q]);
    const eps = 0.1;
    const plus = Float64Array.from(rest, (v, q) => v + eps * delta[q]);
    const minus = Float64Array.from(rest, (v, q) => v - eps * delta[q]);
    const fp = new Float64Array(model.n);
    const fm = new Float64Array(model.n);
    model.tendency(fp, plus, 0);
    model.tendency(fm, minus, 0);
    const { uOffset, n } = model.layout;
    // compare with the size of the Coriolis term f u of the balanced flow
    let umax = 0;
    for (let q = uOffset; q < n; q++) umax = Math.max(umax, Math.abs(delta[q]));
    let worstU = 0;
    for (let q = uOffset; q < n; q++) worstU = Math.max(worstU, Math.abs((fp[q] - fm[q]) / (2 * eps)));
    let worstH = 0;
    for (let q = 0; q < uOffset; q++) worstH = Math.max(worstH, Math.abs((fp[q] - fm[q]) / (2 * eps)));
    expect(umax).toBeGreaterThan(1e-3);
    expect(worstU / (1e-4 * umax)).toBeLessThan(1e-7);
    expect(worstH / (umax * 4000 / 20000)).toBeLessThan(1e-7);
  });

  /** Frequency of the oscillation of the cos(kx) component of h after a plane-wave start, by least squares. */
  function measuredFrequency(f0: number): { omega: number; k: number; c: number } {
    const H = 100;
    const d = 20000;
    const nx = 48;
    const run = createRun(scenario({
      mesh: { type: "periodic-hex", cellsX: nx, cellsY: 4, spacing: d },
      layers: [{ thickness: H, density: 1025 }], physics: { gravity: 9.81, f0 },
    }));
    const k = (2 * Math.PI) / (nx * d);
    const nc = run.mesh.nCells;
    for (let i = 0; i < nc; i++) run.state[i] += 1e-4 * Math.cos(k * run.mesh.cellX[i]);
    const c = Math.sqrt(9.81 * H);
    const omegaGuess = Math.sqrt(f0 * f0 + c * c * k * k);
    const dt = (2 * Math.PI) / omegaGuess / 400;
    run.setStepper({ method: "rk4", dt });
    const ts: number[] = [];
    const ps: number[] = [];
    for (let s = 0; s <= 600; s++) {
      let p = 0;
      for (let i = 0; i < nc; i++) p += (run.state[i] - H) * Math.cos(k * run.mesh.cellX[i]);
      ts.push(s * dt);
      ps.push(p);
      run.advance(1);
    }
    // p(t) = a + b cos(ω t): for each ω solve the 2×2 least squares for (a, b); minimise the residual by golden section
    const residual = (w: number) => {
      let s11 = 0, s12 = 0, s22 = 0, r1 = 0, r2 = 0;
      for (let j = 0; j < ts.length; j++) {
        const cw = Math.cos(w * ts[j]);
        s11 += 1; s12 += cw; s22 += cw * cw; r1 += ps[j]; r2 += ps[j] * cw;
      }
      const det = s11 * s22 - s12 * s12;
      const a = (r1 * s22 - r2 * s12) / det;
      const b = (s11 * r2 - s12 * r1) / det;
      let res = 0;
      for (let j = 0; j < ts.length; j++) res += (ps[j] - a - b * Math.cos(w * ts[j])) ** 2;
      return res;
    };
    let lo = 0.8 * omegaGuess;
    let hi = 1.2 * omegaGuess;
    const g = (Math.sqrt(5) - 1) / 2;
    for (let it = 0; it < 80; it++) {
      const m1 = hi - g * (hi - lo);
      const m2 = lo + g * (hi - lo);
      if (residual(m1) < residual(m2)) hi = m2; else lo = m1;
    }
    return { omega: (lo + hi) / 2, k, c };
  }

  it("long gravity waves travel at √(gH) (Gill 1982, Atmosphere–Ocean Dynamics §5; TRiSK dispersion error (kd)²/32, Thuburn et al. 2009)", () => {
    const { omega, k, c } = measuredFrequency(0);
    const d = 20000;
    expect(Math.abs(omega / k - c) / c).toBeLessThan(2 * ((k * d) ** 2) / 32 + 1e-4);
    expect(Math.abs(omega / k - c) / c).toBeLessThan(2e-3);
  });

  it("long inertia-gravity waves follow ω² = f² + gHk² (Gill 1982, ch. 7)", () => {
    const f0 = 1e-4;
    const { omega, k, c } = measuredFrequency(f0);
    const exact = Math.sqrt(f0 * f0 + c * c * k * k);
    expect(Math.abs(omega - exact) / exact).toBeLessThan(2e-3);
    // and the rotation matters here: the non-rotating value is clearly different
    expect(Math.abs(c * k - exact) / exact).toBeGreaterThan(0.05);
  });
});

describe("vertical modes", () => {
  // Worked two-layer example: H1 = 500 m, H2 = 3500 m, g' = 0.02 m/s² (Gill 1982, §6.2)
  const g = 9.81;
  const gp = 0.02;
  const H1 = 500;
  const H2 = 3500;
  const modes = verticalModes([g, gp], [H1, H2], 1e-4);
  it("two-layer speeds match the closed-form eigenvalues of the 2×2 layer-coupling matrix (Gill 1982, §6.2)", () => {
    const tr = g * (H1 + H2) + gp * H2;
    const det = g * gp * H1 * H2;
    const c0 = Math.sqrt(0.5 * (tr + Math.sqrt(tr * tr - 4 * det)));
    const c1 = Math.sqrt(0.5 * (tr - Math.sqrt(tr * tr - 4 * det)));
    expect(Math.abs(modes.speeds[0] - c0) / c0).toBeLessThan(1e-12);
    expect(Math.abs(modes.speeds[1] - c1) / c1).toBeLessThan(1e-12);
    expect(modes.speeds[0]).toBeCloseTo(198.245, 2); // Gill 1982, §6.2 worked value
    expect(modes.speeds[1]).toBeCloseTo(2.9557, 3);
  });
  it("and Gill's weak-stratification approximations c0² ≈ g(H1+H2), c1² ≈ g'H1H2/(H1+H2) to 0.1% (Gill 1982, §6.2)", () => {
    expect(Math.abs(modes.speeds[0] - Math.sqrt(g * (H1 + H2))) / modes.speeds[0]).toBeLessThan(1e-3);
    expect(Math.abs(modes.speeds[1] - Math.sqrt((gp * H1 * H2) / (H1 + H2))) / modes.speeds[1]).toBeLessThan(1e-3);
    expect(modes.rossbyRadii[1]).toBeCloseTo(modes.speeds[1] / 1e-4, 6);
  });
  it("mode structures are orthonormal in the thickness-weighted product, SᵀHS = H_tot I (Gill 1982, §6.2)", () => {
    const m3 = verticalModes([9.81, 0.014, 0.011], [300, 700, 3000], 1e-4);
    const S = m3.structure;
    for (let a = 0; a < 3; a++) {
      for (let b = 0; b < 3; b++) {
        let s = 0;
        for (let k = 0; k < 3; k++) s += S[k * 3 + a] * m3.thickness[k] * S[k * 3 + b];
        expect(s / 4000).toBeCloseTo(a === b ? 1 : 0, 12);
      }
    }
  });
});

describe("explicit Runge–Kutta steppers", () => {
  /** Smooth nonlinear 3-layer run; returns the final state. */
  function finalState(method: string, dt: number): Float64Array {
    const run = createRun(scenario({
      layers: threeLayers,
      physics: { f0: 1e-4, beta: 0 },
      initial: { type: "bump", amplitude: 30, radius: 80000, interface: 1 },
      stepper: { method, dt },
    }));
    const n = Math.round(2400 / dt);
    expect(run.advance(n)).toBe(true);
    return run.state;
  }
  const reference = finalState("rk4", 2.5);
  const err = (x: Float64Array) => { let s = 0; for (let q = 0; q < x.length; q++) s = Math.max(s, Math.abs(x[q] - reference[q])); return s; };
  for (const [method, order] of [["rk4", 4], ["ssprk3", 3]] as const) {
    it(`${method} converges at order ${order} on a smooth nonlinear 3-layer run (Butcher 2008, Numerical Methods for ODEs; common practice)`, () => {
      const e = [40, 20, 10].map((dt) => err(finalState(method, dt)));
      const observed = Math.log2(e[1] / e[2]);
      expect(observed).toBeGreaterThan(order - 0.3);
      expect(observed).toBeLessThan(order + 0.5);
    });
  }

  it("RK4's stability limit matches the 2√2 imaginary-axis bound with ω_max = √6 c/d of the hexagonal mesh (Thuburn et al. 2009)", () => {
    // λ_max of the discrete Laplacian on the regular hexagonal lattice is 6/d² at the K point (three-colouring
    // pattern, needs cellsX divisible by 3), so ω_max = √(6 g H)/d; RK4 is stable on the imaginary axis for |z| ≤ 2√2.
    const H = 100;
    const d = 10000;
    const limit = (2 * Math.SQRT2) / (Math.sqrt(6 * 9.81 * H) / d);
    const growth = (factor: number) => {
      const run = createRun(scenario({
        mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: d },
        layers: [{ thickness: H, density: 1000 }], physics: { gravity: 9.81, f0: 0 },
        stepper: { method: "rk4", dt: factor * limit },
      }));
      perturb(run, 17, 1e-4, 0);
      const e0 = run.budget().energy;
      run.advance(1000);
      return run.unstable ? Infinity : run.budget().energy / e0;
    };
    expect(growth(0.98)).toBeLessThan(1);
    expect(growth(1.02)).toBeGreaterThan(1e6);
  });

  it("a user tableau in the scenario runs (Heun's method, order 2)", () => {
    const run = createRun(scenario({ stepper: { method: "custom-rk", dt: 30, tableau: { name: "heun", order: 2, a: [[], [1]], b: [0.5, 0.5], c: [0, 1] } } }));
    expect(run.advance(10)).toBe(true);
    expect(run.stepper.stats.rhsEvaluations).toBe(20);
  });
});

describe("blow-up handling", () => {
  it("a too-large Δt stops with step, time, place and Courant numbers and keeps the last good state", () => {
    const run = createRun(scenario({ initial: { type: "bump", amplitude: 1, radius: 60000 }, stepper: { method: "rk4", dt: 400 } }));
    const ok = run.advance(5000);
    expect(ok).toBe(false);
    const u = run.unstable!;
    expect(u.step).toBeGreaterThan(0);
    expect(u.time).toBeCloseTo(u.step * 400, 6);
    expect(["thickness", "velocity"]).toContain(u.field);
    expect(u.courant.barotropic).toBeCloseTo((198.2 * 400) / 20000, 1);
    expect(run.check().ok).toBe(true);
    expect(run.steps).toBe(u.step - 1);
    expect(run.advance(1)).toBe(false);
  });
});

describe("scenario validation names the field", () => {
  const cases: [string, Record<string, unknown>, RegExp][] = [
    ["densities decreasing downward", { layers: [{ thickness: 500, density: 1027 }, { thickness: 3500, density: 1025 }] }, /^layers\[1\]\.density must be greater than layers\[0\]\.density/],
    ["negative thickness", { layers: [{ thickness: -5, density: 1025 }] }, /^layers\[0\]\.thickness/],
    ["zero time step", { stepper: { method: "rk4", dt: 0 } }, /^stepper\.dt/],
    ["odd cellsY", { mesh: { type: "periodic-hex", cellsX: 12, cellsY: 13, spacing: 1000 } }, /^mesh\.cellsY must be even/],
    ["unknown mesh type", { mesh: { type: "round", spacing: 1000 } }, /^mesh/],
    ["polygon without vertices", { mesh: { type: "basin-hex", shape: "polygon", spacing: 1000 } }, /^mesh\.vertices is required/],
    ["missing duration", { duration: undefined }, /^duration/],
    ["unknown field", { colour: "blue" }, /colour: unknown field/],
    ["bump on a missing interface", { initial: { type: "bump", amplitude: 1, radius: 1000, interface: 5 } }, /^initial\.interface must be ≤ 1/],
  ];
  for (const [what, over, pattern] of cases) {
    it(what, () => {
      expect(() => parseScenario(scenario(over))).toThrow(pattern);
    });
  }
  it("unknown method and unknown option name the stepper field", () => {
    expect(() => createRun(scenario({ stepper: { method: "leapfrog9", dt: 10 } }))).toThrow(/^stepper\.method: unknown method "leapfrog9"/);
    expect(() => createRun(scenario({ stepper: { method: "rk4", dt: 10, backend: "krylov" } }))).toThrow(/^stepper\.backend: method "rk4" has no option/);
  });
  it("a malformed user tableau is refused with its field", () => {
    expect(() => createRun(scenario({ stepper: { method: "custom-rk", dt: 10, tableau: { a: [[], [1]], b: [0.5, 0.6], c: [0, 1] } } }))).toThrow(/^stepper\.tableau\.b: weights sum to 1\.1/);
    expect(() => createRun(scenario({ stepper: { method: "custom-rk", dt: 10, tableau: { a: [[0.3], [1]], b: [0.5, 0.5], c: [0, 1] } } }))).toThrow(/^stepper\.tableau\.a\[0\]/);
  });
  it("topography that leaves no bottom layer names the topography field", () => {
    expect(() => parseScenario(scenario({ physics: { topography: { type: "shelf", side: "west", width: 50000, depth: 300 } } }))).toThrow(/^physics\.topography\.depth/);
  });
});
