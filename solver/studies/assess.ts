/**
 * `assess`: a stepper's report card in one call, built from the other studies.
 *   1. observed order: a short sweep on a smooth scenario against a fine RK4 reference (cached), next to the
 *      declared order;
 *   2. largest stable Δt on the scenario (the stability search) and its ratio to the RK4 limit;
 *   3. layer-volume and energy drift over a run at 0.8 of that Δt;
 *   4. wall time per simulated day at that Δt against RK4 at its limit, measured in the same thread, one run
 *      after the other, after parts 1 and 2 have finished (so no other part of the study competes for the
 *      cores), and tendency evaluations, matvecs and inner products per step.
 * Parts 1 and 2 are independent of each other: a caller may run them side by side (`assessOrder`,
 * `assessStability`) and finish with `finishAssess`; `assess` runs them one after the other.
 * Pure: no I/O, a clock and progress callback from the caller.
 */
import { SolverError } from "../errors.js";
import { execute, type RunResult } from "../driver/execute.js";
import { Run } from "../driver/run.js";
import type { BuiltScenario } from "../scenario/build.js";
import type { StepperSpec } from "../scenario/schema.js";
import { definitionOf } from "../time/registry.js";
import { StudyTracker, type StudyHooks, type StudyProgress } from "./common.js";
import { runStability, type StabilityOptions, type StabilityResult, type StepperConfig } from "./stability.js";
import { runSweep, type SweepResult } from "./sweep.js";
import type { ReferenceCache } from "./reference.js";

export interface AssessOptions extends StudyHooks {
  /** A smooth scenario for the order measurement (the CLI uses the built-in ring-wave). */
  orderScenario: BuiltScenario;
  /** Multiples of the order scenario's RK4 limit for the order sweep (default 0.4, 0.2, 0.1, 0.05). */
  orderDtFactors?: readonly number[];
  /** Length of each order-sweep run [s] (default 1200). */
  orderDuration?: number;
  /** Options of the stability search. */
  stability?: StabilityOptions;
  /** Length of the conservation and cost runs [s] (default: the scenario's duration). */
  duration?: number;
  /** Reference cache of the order sweep, and the solver identity in its keys. */
  cache?: ReferenceCache;
  solver?: string;
}

export interface AssessReport {
  kind: "stepwell-assess";
  scenario: string;
  stepper: { name: string; label: string; declaredOrder: number };
  order: { observed: number | null; range: [number, number] | null; scenario: string; points: { dt: number; error: number | null; status: string }[]; reason?: string };
  stability: { maxStableDt: number; ratioToRk4: number; rk4DtLimit: number; bracketed: boolean };
  conservation: { dt: number; steps: number; status: string; massDrift: number; energyDrift: number | null; energyNote?: string };
  cost: {
    dt: number; secondsPerSimDay: number; rk4SecondsPerSimDay: number; rk4Dt: number; speedup: number;
    rhsPerStep: number; matvecsPerStep: number; innerProductsPerStep: number;
  };
  verdicts: { order: string; stability: string; mass: string; energy: string; cost: string };
}

const sig = (v: number, d = 3) => Number(v.toPrecision(d));

/** Energy drift of a run, or its energy-budget residual when the run is forced or dissipative. */
function energyFigure(r: RunResult): { value: number | null; note?: string } {
  const e = r.energy as { maxRelativeDrift: number | null; reason?: string };
  if (e.maxRelativeDrift !== null && e.maxRelativeDrift !== undefined) return { value: e.maxRelativeDrift };
  const b = (r as unknown as { energyBudget?: { relativeResidual?: number } }).energyBudget;
  if (b && typeof b.relativeResidual === "number") return { value: b.relativeResidual, note: "forced or damped run: relative energy-budget residual" };
  return { value: null, note: e.reason ?? "not defined for this run" };
}

/** Part 1, the observed order: a short sweep on the order scenario (`phase` maps its progress into the report's). */
export function assessOrder(config: StepperConfig, o: AssessOptions, onProgress?: (p: StudyProgress) => void): SweepResult {
  const def = definitionOf(config, "stepper");
  const factors = o.orderDtFactors ?? [0.4, 0.2, 0.1, 0.05];
  return runSweep(o.orderScenario, {
    steppers: [{ ...config, label: def.name }], dtFactors: factors, duration: o.orderDuration ?? 1200, field: "stepper",
  }, { clock: o.clock, onProgress, shouldCancel: o.shouldCancel, cache: o.cache, solver: o.solver });
}

/** Part 2, the largest stable Δt: the stability search on the scenario. */
export function assessStability(built: BuiltScenario, config: StepperConfig, o: AssessOptions, onProgress?: (p: StudyProgress) => void): StabilityResult {
  const [stab] = runStability(built, [config], o.stability ?? {}, { clock: o.clock, onProgress, shouldCancel: o.shouldCancel, field: "stepper" });
  return stab;
}

/** Checks the stepper and its options before any work; returns its label. */
export function checkAssess(built: BuiltScenario, config: StepperConfig): string {
  definitionOf(config, "stepper");
  return new Run(built, { ...config, dt: 1 } as StepperSpec).stepper.label;
}

// progress: 4 parts with nominal weights (order sweep 25%, stability 50%, conservation 15%, RK4 cost 10%)
export const ASSESS_PARTS = 4;
const phase = (hooks: StudyHooks, start: number, width: number, name: string, done: number) => (p: StudyProgress) =>
  hooks.onProgress?.({ fraction: start + width * p.fraction, done, total: ASSESS_PARTS, unit: "parts", item: `${name}: ${p.item}` });

/** The whole report card in this thread: parts 1 and 2 (independent of each other; `--jobs` runs them side by side), then `finishAssess`. */
export function assess(built: BuiltScenario, config: StepperConfig, o: AssessOptions): AssessReport {
  checkAssess(built, config);
  const tracker = new StudyTracker(o, 1);
  const sweep = assessOrder(config, o, phase(o, 0, 0.25, "order", 0));
  tracker.checkpoint();
  const stab = assessStability(built, config, o, phase(o, 0.25, 0.5, "stability", 1));
  tracker.checkpoint();
  return finishAssess(built, config, o, sweep, stab);
}

/**
 * Parts 3 and 4 from the results of parts 1 and 2: the conservation run at 0.8 of the largest stable Δt and the
 * RK4 cost run, one after the other in this thread (their wall times are the cost figures, so nothing else of
 * the study runs beside them).
 */
export function finishAssess(built: BuiltScenario, config: StepperConfig, o: AssessOptions, sweep: SweepResult, stab: StabilityResult): AssessReport {
  const def = definitionOf(config, "stepper");
  const label = checkAssess(built, config);
  const declaredOrder = def.order;
  const hooks = o;
  const tracker = new StudyTracker(hooks, 1);
  const fit = sweep.orders[def.name];
  const points = sweep.rows.map((r) => ({ dt: r.dt, error: r.error.thickness, status: r.status }));
  const observed = fit && fit.order !== null && Number.isFinite(fit.order) ? fit.order : null;
  const range = fit && fit.range ? (fit.range as [number, number]) : null;
  if (!(stab.maxStableDt > 0)) {
    throw new SolverError("bad-input", `stepper: no stable Δt found on ${built.scenario.name} (tried down to ${sig(Math.min(...stab.trials.map((t) => t.dt)))} s)`, "stepper");
  }

  // 3. conservation and cost at 0.8 of the largest stable Δt
  const duration = o.duration ?? built.scenario.duration;
  const dt = 0.8 * stab.maxStableDt;
  const steps = Math.max(10, Math.round(duration / dt));
  const run = new Run(built, { ...config, dt } as StepperSpec);
  const stop = () => o.shouldCancel?.() === true;
  const r = execute(run, { steps, chunk: 1, clock: o.clock, onProgress: ({ fraction }) => { phase(hooks, 0.75, 0.15, "conservation", 2)({ fraction, done: 0, total: 1, item: `${def.name} Δt = ${sig(dt)} s` }); return !stop(); } });
  tracker.checkpoint();
  const limit = run.rk4DtLimit();
  const rk4Dt = 0.95 * limit;
  const rk4Steps = Math.max(10, Math.min(Math.round((r.simulatedSeconds || duration) / rk4Dt), 20000));
  const rk4 = execute(new Run(built, { method: "rk4", dt: rk4Dt }), { steps: rk4Steps, chunk: 1, clock: o.clock, onProgress: ({ fraction }) => { phase(hooks, 0.9, 0.1, "RK4 cost", 3)({ fraction, done: 0, total: 1, item: `rk4 Δt = ${sig(rk4Dt)} s` }); return !stop(); } });
  tracker.checkpoint();
  hooks.onProgress?.({ fraction: 1, done: ASSESS_PARTS, total: ASSESS_PARTS, unit: "parts", item: "done" });

  const perDay = (x: RunResult) => (x.simulatedSeconds > 0 ? (x.wallSeconds * 86400) / x.simulatedSeconds : NaN);
  const spd = perDay(r), rk4Spd = perDay(rk4);
  const energy = energyFigure(r);
  const n = Math.max(1, r.steps);

  const verdictOrder = observed === null
    ? `order could not be fitted on ${o.orderScenario.scenario.name} (errors: ${points.map((p) => (p.error === null ? p.status : sig(p.error, 2))).join(", ")})`
    : Math.abs(observed - declaredOrder) <= 0.3
      ? `order ${sig(observed)}, as declared (${declaredOrder})`
      : observed < declaredOrder
        ? `order ${sig(observed)}: below the declared ${declaredOrder}`
        : `order ${sig(observed)}: above the declared ${declaredOrder} on this problem`;
  const ratio = stab.ratioToRk4;
  const verdictStab = `largest stable Δt ${sig(stab.maxStableDt)} s = ${sig(ratio)}× the RK4 limit${stab.bracketed ? "" : " (at least: no unstable Δt was found)"}` +
    (ratio < 0.999 ? "; less stable than RK4" : "");
  const verdictMass = r.mass.maxRelativeDrift <= 1e-12
    ? `layer volume kept to round-off (relative drift ${r.mass.maxRelativeDrift.toExponential(1)})`
    : `mass drift ${r.mass.maxRelativeDrift.toExponential(1)}: this stepper does not conserve layer volume`;
  const verdictEnergy = energy.value === null
    ? `energy drift not defined: ${energy.note}`
    : `${energy.note ? "energy-budget residual" : "energy drift"} ${energy.value.toExponential(1)} over ${r.steps} step${r.steps === 1 ? "" : "s"} at ${sig(dt)} s` +
      (r.status !== "completed" ? ` (run ${r.status})` : "");
  const speedup = rk4Spd / spd;
  const verdictCost = !Number.isFinite(speedup)
    ? "cost not measured (no clock)"
    : speedup >= 1
      ? `${sig(speedup, 2)}× faster than RK4 at its limit per simulated day (${sig(spd)} s against ${sig(rk4Spd)} s)`
      : `${sig(1 / speedup, 2)}× slower than RK4 at its limit per simulated day (${sig(spd)} s against ${sig(rk4Spd)} s)`;

  return {
    kind: "stepwell-assess", scenario: built.scenario.name,
    stepper: { name: def.name, label, declaredOrder },
    order: { observed, range, scenario: o.orderScenario.scenario.name, points, ...(observed === null ? { reason: "no fit in the asymptotic range" } : {}) },
    stability: { maxStableDt: stab.maxStableDt, ratioToRk4: ratio, rk4DtLimit: limit, bracketed: stab.bracketed },
    conservation: { dt, steps: r.steps, status: r.status, massDrift: r.mass.maxRelativeDrift, energyDrift: energy.value, ...(energy.note ? { energyNote: energy.note } : {}) },
    cost: {
      dt, secondsPerSimDay: spd, rk4SecondsPerSimDay: rk4Spd, rk4Dt, speedup,
      rhsPerStep: r.rhsEvaluations / n, matvecsPerStep: r.matvecs / n, innerProductsPerStep: r.innerProducts / n,
    },
    verdicts: { order: verdictOrder, stability: verdictStab, mass: verdictMass, energy: verdictEnergy, cost: verdictCost },
  };
}
