import { SolverError } from "../errors.js";
import type { Budget } from "../diagnostics/budget.js";
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
  mass: { initial: number[]; final: number[]; maxRelativeDrift: number };
  energy: { initial: number; final: number; maxRelativeDrift: number };
  unstable: UnstableReport | null;
  note?: string;
}

/** Tracks the largest relative drift of the per-layer volumes and of the energy over samples. */
export class DriftTracker {
  readonly mass0: number[];
  readonly energy0: number;
  maxMassDrift = 0;
  maxEnergyChange = 0;
  maxEnergy: number;
  constructor(b0: Budget) {
    this.mass0 = [...b0.mass];
    this.energy0 = b0.energy;
    this.maxEnergy = Math.abs(b0.energy);
  }
  add(b: Budget): void {
    b.mass.forEach((m, k) => { this.maxMassDrift = Math.max(this.maxMassDrift, Math.abs(m - this.mass0[k]) / Math.abs(this.mass0[k])); });
    this.maxEnergyChange = Math.max(this.maxEnergyChange, Math.abs(b.energy - this.energy0));
    this.maxEnergy = Math.max(this.maxEnergy, Math.abs(b.energy));
  }
  /** Relative to the initial energy; from rest (E0 = 0) relative to the largest energy reached. */
  get maxEnergyDrift(): number {
    const ref = this.energy0 !== 0 ? Math.abs(this.energy0) : this.maxEnergy;
    return ref > 0 ? this.maxEnergyChange / ref : 0;
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
  const drift = new DriftTracker(b0);
  const sample = Math.max(1, Math.round((s.outputInterval ?? s.duration / 24) / dt));
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
      sinceSample = 0;
    }
    if (!ok) break;
    if (o.onProgress && o.onProgress({ fraction: (done - start) / count, step: done, time: run.time, budget: b }) === false) {
      cancelled = true;
      break;
    }
  }
  const wall = clock() - t0;
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
    mass: { initial: drift.mass0, final: bEnd.mass, maxRelativeDrift: drift.maxMassDrift },
    energy: { initial: drift.energy0, final: bEnd.energy, maxRelativeDrift: drift.maxEnergyDrift },
    unstable: run.unstable,
    ...(run.stepper.note ? { note: run.stepper.note } : {}),
  };
}
