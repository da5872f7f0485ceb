import { SolverError } from "../errors.js";
import { EnergyBudgetTracker } from "../diagnostics/energyBudget.js";
import { budgetWork, computeBudget, courantNumbers, type Budget, type BudgetWork, type CourantNumbers } from "../diagnostics/budget.js";
import { deepestColumnSpeed, hexMaxFrequency, verticalModes, type VerticalModes } from "../model/modes.js";
import { problemFor, type ModelProblem } from "../model/problem.js";
import { buildScenario, type BuiltScenario } from "../scenario/build.js";
import { parseScenario, stepperSchema, type Scenario, type StepperSpec } from "../scenario/schema.js";
import { createStepper, rk4ImaginaryBound } from "../time/registry.js";
import type { Stepper } from "../time/types.js";

/** Where, when and why a run stopped (a result, not an exception). */
export interface UnstableReport {
  step: number;
  /** Simulated time of the failed step's end [s]. */
  time: number;
  field: "thickness" | "velocity";
  layer: number;
  /** Cell index for thickness, edge index for velocity. */
  index: number;
  x: number;
  y: number;
  value: number;
  reason: string;
  /** Courant numbers of the last good state at the current Δt. */
  courant: CourantNumbers;
}

export interface RunDescription {
  name: string;
  nLayers: number;
  nCells: number;
  nEdges: number;
  nVertices: number;
  spacing: number;
  modes: { index: number; speed: number; rossbyRadius: number }[];
  /** RK4 gravity-wave limit 2√2/ω_max with ω_max = √6 c0/d [s]. */
  rk4DtLimit: number;
}

export interface FaultCheck { ok: boolean; field?: "thickness" | "velocity"; layer?: number; index?: number; value?: number; reason?: string }

/**
 * A live run of one scenario: state, time, stepper, last good state. Used by the CLI, the worker and the studies.
 */
export class Run {
  readonly built: BuiltScenario;
  readonly modes: VerticalModes;
  readonly state: Float64Array;
  readonly lastGood: Float64Array;
  stepper!: Stepper;
  spec!: StepperSpec;
  time = 0;
  steps = 0;
  unstable: UnstableReport | null = null;
  /** The energy budget over the steps of `advance`, once switched on with `trackEnergyBudget` (null: off). */
  energyBudget: EnergyBudgetTracker | null = null;
  private readonly work: BudgetWork;

  constructor(built: BuiltScenario, spec?: StepperSpec) {
    this.built = built;
    const p = built.model.params;
    this.modes = verticalModes(p.reducedGravity, p.nominalThickness as number[], p.f0);
    this.state = Float64Array.from(built.initial);
    this.lastGood = Float64Array.from(built.initial);
    this.work = budgetWork(built.model);
    this.setStepper(spec ?? built.scenario.stepper);
  }

  get model() { return this.built.model; }
  /** The stepper interface of this run's model (built once per model, cached). */
  get problem(): ModelProblem { return problemFor(this.built.model); }
  get mesh() { return this.built.mesh; }
  get dt(): number { return this.spec.dt; }

  /** Replace the stepper (e.g. between chunks); validates the spec and names the offending field. */
  setStepper(spec: StepperSpec, field = "stepper"): void {
    const r = stepperSchema.safeParse(spec);
    if (!r.success) {
      const i = r.error.issues[0];
      const f = `${field}${i.path.length ? "." + i.path.join(".") : ""}`;
      throw new SolverError("bad-input", `${f}: ${i.message}`, f);
    }
    this.stepper = createStepper(this.problem, r.data, { field });
    this.spec = r.data;
  }

  describe(): RunDescription {
    const m = this.mesh;
    return {
      name: this.built.scenario.name, nLayers: this.model.params.nLayers,
      nCells: m.nCells, nEdges: m.nEdges, nVertices: m.nVertices, spacing: m.spacing,
      modes: this.modes.speeds.map((speed, index) => ({ index, speed, rossbyRadius: this.modes.rossbyRadii[index] })),
      rk4DtLimit: this.rk4DtLimit(),
    };
  }

  /** RK4 gravity-wave Δt limit of this scenario's fastest mode on its mesh [s]. */
  rk4DtLimit(): number {
    return rk4ImaginaryBound() / hexMaxFrequency(this.fastestSpeed(), this.mesh.spacing);
  }

  /** Barotropic speed over the deepest water column (topography makes c0 vary) [m/s]. */
  fastestSpeed(): number {
    const p = this.model.params;
    return deepestColumnSpeed(p.reducedGravity, p.nominalThickness, p.bottom);
  }

  /**
   * Switch the energy budget on (from the current state and time, costing one extra tendency evaluation per step,
   * counted apart from the stepper's) or off.
   */
  trackEnergyBudget(on = true): EnergyBudgetTracker | null {
    if (!on) { this.energyBudget = null; return null; }
    this.energyBudget ??= new EnergyBudgetTracker(this.model);
    this.energyBudget.start(this.state, this.time);
    return this.energyBudget;
  }

  budget(x: Float64Array = this.state): Budget {
    return computeBudget(this.model, x, this.work);
  }

  courant(b: Budget = this.budget(), dt = this.dt): CourantNumbers {
    return courantNumbers([this.fastestSpeed(), this.modes.speeds[1] ?? 0], b.maxSpeed, dt, this.mesh.spacing);
  }

  /** Check finiteness of everything and positivity of thickness. */
  check(x: Float64Array = this.state): FaultCheck {
    const { nCells: nc, nEdges: ne, uOffset, n } = this.model.layout;
    let bad = -1;
    for (let q = 0; q < uOffset; q++) {
      const v = x[q];
      if (!(v > 0 && v < Infinity)) { bad = q; break; }
    }
    if (bad >= 0) {
      const v = x[bad];
      return { ok: false, field: "thickness", layer: Math.floor(bad / nc), index: bad % nc, value: v,
        reason: Number.isFinite(v) ? `layer thickness fell to ${v.toPrecision(4)} m (must stay > 0)` : `layer thickness became ${v}` };
    }
    for (let q = uOffset; q < n; q++) {
      const v = x[q];
      if (!(v - v === 0)) {
        const r = q - uOffset;
        return { ok: false, field: "velocity", layer: Math.floor(r / ne), index: r % ne, value: v, reason: `normal velocity became ${v}` };
      }
    }
    return { ok: true };
  }

  /**
   * Advance up to `nSteps` steps. Each step is checked; on a fault the state is reset to the last good one,
   * `unstable` is filled in and false is returned.
   */
  advance(nSteps: number): boolean {
    if (this.unstable) return false;
    const dt = this.dt;
    for (let s = 0; s < nSteps; s++) {
      this.lastGood.set(this.state);
      try {
        this.stepper.step(this.state, this.time, dt);
      } catch (e) {
        this.state.set(this.lastGood); // a stepper that throws leaves the last good state in place
        throw e;
      }
      const c = this.check();
      if (!c.ok) {
        this.state.set(this.lastGood);
        const m = this.mesh;
        const isCell = c.field === "thickness";
        this.unstable = {
          step: this.steps + 1, time: this.time + dt, field: c.field!, layer: c.layer!, index: c.index!,
          x: isCell ? m.cellX[c.index!] : m.edgeX[c.index!], y: isCell ? m.cellY[c.index!] : m.edgeY[c.index!],
          value: c.value!, reason: c.reason!, courant: this.courant(),
        };
        return false;
      }
      this.time += dt;
      this.steps++;
      this.energyBudget?.afterStep(this.state, this.time);
    }
    return true;
  }

  reset(): void {
    this.state.set(this.built.initial);
    this.lastGood.set(this.built.initial);
    this.time = 0;
    this.steps = 0;
    this.unstable = null;
    this.energyBudget?.start(this.state, 0);
  }
}

/** Validate a raw scenario object, build it and start a run (optionally with another stepper). */
export function createRun(raw: unknown, spec?: StepperSpec): Run {
  const scenario: Scenario = parseScenario(raw);
  return new Run(buildScenario(scenario), spec);
}
