import { describe, expect, it } from "vitest";
import { createRun } from "../solver/driver/run";
import { execute } from "../solver/driver/execute";
import { EnergyBudgetTracker } from "../solver/diagnostics/energyBudget";
import { totalEnergy, budgetWork } from "../solver/diagnostics/budget";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { runSweep } from "../solver/studies/sweep";
import { builtinScenario } from "../solver/scenario/builtins";
import { seededRandom } from "../solver/mesh/hexLattice";
import { main } from "../solver/cli/main";
import { sweepCsv } from "../solver/cli/sweepCommand";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

/** A small smooth basin run with every forcing and dissipation term of the model. */
function forcedDamped(over: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    name: "budget-test",
    mesh: { type: "basin-hex", shape: "rectangle", width: 300000, height: 260000, spacing: 20000 },
    layers: [{ thickness: 400, density: 1025 }, { thickness: 1600, density: 1027 }],
    physics: {
      gravity: 9.81, f0: 1e-4, beta: 1e-11,
      wind: { type: "zonal-cosine", amplitude: 0.2 },
      bottomDrag: 2e-6, viscosity: 4000, biharmonic: 1e12,
    },
    initial: { type: "bump", amplitude: 0.5, radius: 60000 },
    stepper: { method: "rk4", dt: 40 },
    duration: 4000,
    ...over,
  };
}

function relativeResidualAt(dt: number, raw: Record<string, unknown>): { rel: number; residual: number; change: number; windWork: number } {
  const run = createRun(raw, { method: "rk4", dt });
  const r = execute(run);
  const b = r.energyBudget!;
  return { rel: b.relativeResidual!, residual: b.residual, change: b.change, windWork: b.windWork };
}

describe("energy budget", () => {
  it("the powers are the semi-discrete dE/dt and their derivatives are dP/dt along the tendency", () => {
    // Ringler, Thuburn, Klemp and Skamarock (2010), J. Comput. Phys. 229: the adiabatic TRiSK terms conserve
    // the discrete energy, so dE/dt equals wind power − drag loss − viscous loss. Checked here against a centred
    // difference of E and of each power along F (common practice, no source): error O(ε²).
    const run = createRun(forcedDamped());
    run.advance(30); // move away from the rest state so every term is non-zero
    const model = run.model;
    const x = Float64Array.from(run.state);
    const rnd = seededRandom(7);
    const { uOffset, nEdges: ne } = model.layout;
    // noise on open edges only: coastline normal velocities stay zero as in every run
    for (let q = uOffset; q < model.n; q++) if (model.mesh.edgeOpen[(q - uOffset) % ne]) x[q] += 0.02 * (rnd() - 0.5);
    const tr = new EnergyBudgetTracker(model);
    const f = new Float64Array(model.n);
    model.tendency(f, x, 0);
    const p = tr.powers(x, f);
    expect(p.wind).not.toBe(0);
    expect(p.drag).toBeGreaterThan(0);
    expect(p.viscous).toBeGreaterThan(0);
    const w = budgetWork(model);
    const energy = (y: Float64Array) => { const e = totalEnergy(model, y, w); return e.kinetic + e.potential; };
    const eps = 1;
    const xp = x.map((v, i) => v + eps * f[i]);
    const xm = x.map((v, i) => v - eps * f[i]);
    const dE = (energy(xp) - energy(xm)) / (2 * eps);
    const rate = p.wind - p.drag - p.viscous;
    expect(Math.abs(dE - rate) / Math.max(Math.abs(p.wind), p.drag, p.viscous)).toBeLessThan(1e-7);
    // the derivatives, each against a centred difference of the power itself
    const fp = new Float64Array(model.n);
    const fm = new Float64Array(model.n);
    model.tendency(fp, xp, 0);
    model.tendency(fm, xm, 0);
    const pp = tr.powers(xp, fp);
    const pm = tr.powers(xm, fm);
    for (const [key, dkey] of [["wind", "dWind"], ["drag", "dDrag"], ["viscous", "dViscous"]] as const) {
      const fd = (pp[key] - pm[key]) / (2 * eps);
      expect(Math.abs(fd - p[dkey]) / Math.abs(p[dkey])).toBeLessThan(1e-4);
    }
  });

  it("RK4 on a smooth forced and damped run: the relative residual shrinks at least 8× when Δt halves", () => {
    // RK4 is fourth order (Kutta 1901; Hairer, Nørsett and Wanner, Solving ODEs I, 1993) and so is the
    // corrected trapezoid rule (Davis and Rabinowitz, Methods of Numerical Integration, 1984): the residual is
    // O(Δt⁴), a factor 16 per halving; 8 leaves room for the pre-asymptotic range.
    const raw = forcedDamped();
    const a = relativeResidualAt(80, raw);
    const b = relativeResidualAt(40, raw);
    const c = relativeResidualAt(20, raw);
    expect(a.windWork).toBeGreaterThan(0);
    expect(a.rel / b.rel).toBeGreaterThanOrEqual(8);
    expect(b.rel / c.rel).toBeGreaterThanOrEqual(8);
    // at the finest Δt the budget closes to a small fraction of its largest term
    expect(c.rel).toBeLessThan(1e-3);
  });

  it("an unforced inviscid run: every work term is zero and the residual is the energy drift", () => {
    const raw = forcedDamped({ physics: { gravity: 9.81, f0: 1e-4, beta: 0 } });
    const run = createRun(raw, { method: "rk4", dt: 60 });
    const r = execute(run);
    const b = r.energyBudget!;
    expect(b.windWork).toBe(0);
    expect(b.dragLoss).toBe(0);
    expect(b.viscousLoss).toBe(0);
    expect(b.residual).toBe(b.change);
    expect(b.change).toBe(r.energy.final - r.energy.initial);
    expect(b.relativeResidual).toBeNull();
    expect(b.reason).toMatch(/drift/);
    // the drift is defined here (energy is meant to be conserved and there is some)
    expect(r.energy.maxRelativeDrift).not.toBeNull();
    expect(r.energy.maxRelativeDrift!).toBeGreaterThanOrEqual(Math.abs(b.change) / r.energy.initial * (1 - 1e-12));
    expect(r.energy.reason).toBeUndefined();
  });

  it("the budget costs one tendency per step plus one, counted apart from the stepper's work", () => {
    const run = createRun(forcedDamped(), { method: "rk4", dt: 100 });
    const r = execute(run);
    expect(r.steps).toBe(40);
    expect(r.rhsEvaluations).toBe(4 * 40); // RK4: four per step, the budget's not included
    expect(r.energyBudget!.rhsEvaluations).toBe(40 + 1);
  });

  it("the budget is recorded as a series at each output time, ending with the run's totals", () => {
    const run = createRun(forcedDamped({ outputInterval: 1000 }), { method: "rk4", dt: 100 });
    const r = execute(run);
    const s = r.budgetSeries!;
    expect(s.time).toEqual([0, 1000, 2000, 3000, 4000]);
    expect(s.change[0]).toBe(0);
    const last = s.time.length - 1;
    expect(s.residual[last]).toBe(r.energyBudget!.residual);
    expect(s.windWork[last]).toBe(r.energyBudget!.windWork);
    expect(s.energy[last]).toBe(r.energy.final);
    for (let j = 0; j <= last; j++) expect(s.residual[j]).toBeCloseTo(s.change[j] - (s.windWork[j] - s.dragLoss[j] - s.viscousLoss[j]), 6);
  });
});

describe("no drift figure without a scale", () => {
  it("the main demo starts at rest and is forced: drift is null with a reason, the residual stands in its place", () => {
    const run = createRun(builtinScenario("shelf-gyre-basin"));
    const r = execute(run, { steps: 6 });
    expect(r.energy.initial).toBe(0);
    expect(r.energy.maxRelativeDrift).toBeNull();
    expect(r.energy.reason).toMatch(/forced or damped/);
    expect(r.energy.budgetResidual).toBe(r.energyBudget!.residual);
    expect(r.energy.relativeBudgetResidual).toBeGreaterThan(0);
    expect(r.energy.relativeBudgetResidual).toBeLessThan(1e-3);
  });

  it("an unforced run at rest has no energy to drift: null with a reason, not 0 or 1", () => {
    const run = createRun(forcedDamped({ physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "rest" } }), { method: "rk4", dt: 100 });
    const r = execute(run);
    expect(r.energy.maxRelativeDrift).toBeNull();
    expect(r.energy.reason).toMatch(/zero energy/);
    expect(r.energyBudget!.relativeResidual).toBeNull();
  });

  it("sweep rows of a forced run: energyDrift null with its reason, energyResidual a number", () => {
    const built = buildScenario(parseScenario(forcedDamped({ duration: 2000 })));
    const res = runSweep(built, { steppers: [{ method: "rk4" }], dts: [100, 50] });
    for (const row of res.rows) {
      expect(row.energyDrift).toBeNull();
      expect(row.energyDriftReason).toMatch(/forced or damped/);
      expect(row.energyResidual).toBeGreaterThan(0);
    }
    // the residual of the finer run is smaller (fourth-order stepper and rule)
    expect(res.rows[1].energyResidual!).toBeLessThan(res.rows[0].energyResidual! / 8);
  });
});

describe("the energy budget on the command line", () => {
  it("run --json has energyBudget with the named fields, and the summary prints them with units", async () => {
    const dir = mkdtempSync(join(tmpdir(), "stepwell-budget-"));
    const file = join(dir, "demo.json");
    let out = "";
    let err = "";
    const code = await main(["run", "shelf-gyre-basin", "--steps", "12", "--quiet", "--json", file], (t) => { out += t + "\n"; }, (t) => { err += t + "\n"; });
    expect(err).toBe("");
    expect(code).toBe(0);
    const j = JSON.parse(readFileSync(file, "utf8"));
    for (const k of ["change", "windWork", "dragLoss", "viscousLoss", "residual", "relativeResidual"]) expect(typeof j.energyBudget[k]).toBe("number");
    expect(j.energyBudget.residual).toBeCloseTo(j.energyBudget.change - (j.energyBudget.windWork - j.energyBudget.dragLoss - j.energyBudget.viscousLoss), 3);
    expect(j.energy.maxRelativeDrift).toBeNull();
    expect(typeof j.energy.reason).toBe("string");
    expect(j.budgetSeries.time.at(-1)).toBe(1200);
    expect(out).toMatch(/m⁵ s⁻²\s+J/);
    for (const label of ["change of total energy", "wind work", "bottom-drag loss", "viscous loss", "residual", "relative residual"]) expect(out).toContain(label);
    expect(out).toMatch(/max relative energy drift\s+n\/a/);
  });

  it("the sweep CSV carries energyDrift (empty when null) and energyResidual", () => {
    const built = buildScenario(parseScenario(forcedDamped({ duration: 1000 })));
    const res = runSweep(built, { steppers: [{ method: "rk4" }], dts: [100] });
    const [header, row] = sweepCsv(res.rows).trim().split("\n");
    const cols = header.split(",");
    const cells = row.split(",");
    expect(cells[cols.indexOf("energyDrift")]).toBe("");
    expect(Number(cells[cols.indexOf("energyResidual")])).toBe(res.rows[0].energyResidual);
  });
});
