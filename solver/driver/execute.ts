import { SolverError } from "../errors.js";
import { LIMITS } from "../scenario/limits.js";
import type { Budget } from "../diagnostics/budget.js";
import type { ShallowWaterModel } from "../model/shallowWater.js";
import { driftUndefinedReason, type EnergyBudgetSeries, type EnergyBudgetSummary } from "../diagnostics/energyBudget.js";
import { Run, type UnstableReport } from "./run.js";

export interface ExecuteOptions {
  /** Number of steps to take (from the run's current step); if absent, `duration` (or the scenario's) decides. */
  steps?: number;
  /** Simulated seconds to run [s]. */
  duration?: number;
  /** Wall clock in seconds (performance.now()/1000 in callers); the solver has no clock of its own. */
  clock?: () => number;
  /** Called after each chunk with the fraction done. Return false to cancel. */
  onProgress?: (p: { fraction: number; step: number; time: number; budget?: Budget }) => boolean | void;
  /** Steps per chunk between progress calls (default: the output interval). */
  chunk?: number;
  /** Track the energy budget (default true): one extra tendency evaluation per step, reported apart. */
  energyBudget?: boolean;
}

/**
 * Energy drift and what stands in its place. The drift (max |E − E0| / |E0| over the output times) is defined
 * only for a run that neither forces nor dissipates and starts with energy; otherwise it is null with a reason,
 * and the energy-budget residual (the energy the stepper itself creates or destroys) is reported instead.
 */
export interface EnergyReport {
  /** Total energy per unit reference density [m⁵ s⁻²]; × ρ0 gives joules. */
  initial: number;
  final: number;
  maxRelativeDrift: number | null;
  /** Why maxRelativeDrift is null. */
  reason?: string;
  /** Energy-budget residual over the run [m⁵ s⁻²] (null when the budget was not tracked). */
  budgetResidual: number | null;
  /** |residual| / the largest budget term (null with energyBudget.reason when undefined). */
  relativeBudgetResidual: number | null;
}

export interface RunResult {
  status: "completed" | "unstable" | "cancelled";
  scenario: string;
  method: string;
  label: string;
  dt: number;
  rk4DtLimit: number;
  dtRatioToRk4: number;
  steps: number;
  simulatedSeconds: number;
  wallSeconds: number;
  rhsEvaluations: number;
  matvecs: number;
  innerProducts: number;
  matvecsPerStep: number;
  /** φ-action calls per step (0 for steppers without φ-functions). */
  phiActionsPerStep: number;
  mass: { initial: number[]; final: number[]; maxRelativeDrift: number };
  energy: EnergyReport;
  /** Energy budget over the run, or null when not tracked. */
  energyBudget: EnergyBudgetSummary | null;
  /** The budget at each output time (cumulative from the start), or null when not tracked. */
  budgetSeries: EnergyBudgetSeries | null;
  unstable: UnstableReport | null;
  note?: string;
}

/** Tracks the largest relative drift of the per-layer volumes and of the energy over samples. */
export class DriftTracker {
  readonly mass0: number[];
  readonly energy0: number;
  maxMassDrift = 0;
  maxEnergyChange = 0;
  /** Why the energy drift is not defined for this run (see driftUndefinedReason), or null. */
  readonly driftReason: string | null;
  constructor(b0: Budget, model: ShallowWaterModel) {
    this.mass0 = [...b0.mass];
    this.energy0 = b0.energy;
    this.driftReason = driftUndefinedReason(model, b0.energy);
  }
  add(b: Budget): void {
    b.mass.forEach((m, k) => { this.maxMassDrift = Math.max(this.maxMassDrift, Math.abs(m - this.mass0[k]) / Math.abs(this.mass0[k])); });
    this.maxEnergyChange = Math.max(this.maxEnergyChange, Math.abs(b.energy - this.energy0));
  }
  /** Largest |E − E0| / E0 over the samples; null with a reason when that means nothing. */
  get energyDrift(): { value: number | null; reason?: string } {
    return this.driftReason ? { value: null, reason: this.driftReason } : { value: this.maxEnergyChange / this.energy0 };
  }
}

/** Run to the end (or to a blow-up) and summarise. Deterministic apart from wallSeconds. */
export function execute(run: Run, o: ExecuteOptions = {}): RunResult {
  const dt = run.dt;
  const s = run.built.scenario;
  // a run that already took steps (a restart) takes `steps` more; its step count goes on from where it was
  const start = run.steps;
  const count = o.steps ?? Math.round((o.duration ?? s.duration) / dt);
  const total = start + count;
  if (!(count >= 1)) throw new SolverError("bad-input", `--steps: the run needs at least one step (duration ${o.duration ?? s.duration} s at dt ${dt} s)`, "--steps");
  const clock = o.clock ?? (() => 0);
  const b0 = run.budget();
  const drift = new DriftTracker(b0, run.model);
  const tracker = o.energyBudget === false ? null : run.trackEnergyBudget();
  if (tracker) tracker.clock = o.clock ?? null;
  const sample = Math.max(1, Math.round((s.outputInterval ?? s.duration / 24) / dt));
  if (total / sample > LIMITS.outputTimes) {
    throw new SolverError("bad-input", `outputInterval: ${total} steps with an output every ${sample} step${sample === 1 ? "" : "s"} is more than the limit of ` +
      `${LIMITS.outputTimes} output times; make outputInterval longer`, "outputInterval");
  }
  const chunk = Math.max(1, o.chunk ?? sample);
  const st0 = { ...run.stepper.stats };
  const t0 = clock();
  let done = start;
  let cancelled = false;
  let sinceSample = 0;
  while (done < total) {
    const n = Math.min(chunk, total - done);
    const ok = run.advance(n);
    done = run.steps;
    sinceSample += n;
    let b: Budget | undefined;
    if (!ok || sinceSample >= sample || done >= total) {
      b = run.budget();
      drift.add(b);
      tracker?.record(run.state);
      sinceSample = 0;
    }
    if (!ok) break;
    if (o.onProgress && o.onProgress({ fraction: (done - start) / count, step: done, time: run.time, budget: b }) === false) {
      cancelled = true;
      break;
    }
  }
  tracker?.record(run.state);
  const budgetSummary = tracker ? tracker.summary(run.state) : null;
  const wall = clock() - t0 - (budgetSummary?.wallSeconds ?? 0);
  const energyDrift = drift.energyDrift;
  const bEnd = run.budget();
  const st = run.stepper.stats;
  const steps = st.steps - st0.steps;
  const matvecs = st.matvecs - st0.matvecs;
  const limit = run.rk4DtLimit();
  return {
    status: run.unstable ? "unstable" : cancelled ? "cancelled" : "completed",
    scenario: s.name, method: run.stepper.method, label: run.stepper.label, dt,
    rk4DtLimit: limit, dtRatioToRk4: dt / limit,
    steps: run.steps, simulatedSeconds: run.time, wallSeconds: wall,
    rhsEvaluations: st.rhsEvaluations - st0.rhsEvaluations, matvecs, innerProducts: st.innerProducts - st0.innerProducts,
    matvecsPerStep: steps > 0 ? matvecs / steps : 0,
    phiActionsPerStep: steps > 0 ? (st.phiActions - st0.phiActions) / steps : 0,
    mass: { initial: drift.mass0, final: bEnd.mass, maxRelativeDrift: drift.maxMassDrift },
    energy: {
      initial: drift.energy0, final: bEnd.energy, maxRelativeDrift: energyDrift.value,
      ...(energyDrift.reason ? { reason: energyDrift.reason } : {}),
      budgetResidual: budgetSummary ? budgetSummary.residual : null,
      relativeBudgetResidual: budgetSummary ? budgetSummary.relativeResidual : null,
    },
    energyBudget: budgetSummary,
    budgetSeries: tracker ? copySeries(tracker.series) : null,
    unstable: run.unstable,
    ...(run.stepper.note ? { note: run.stepper.note } : {}),
  };
}

function copySeries(s: EnergyBudgetSeries): EnergyBudgetSeries {
  return {
    time: [...s.time], energy: [...s.energy], change: [...s.change], windWork: [...s.windWork], dragLoss: [...s.dragLoss],
    viscousLoss: [...s.viscousLoss], residual: [...s.residual],
  };
}
