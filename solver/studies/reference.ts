import { SolverError } from "../errors.js";
import { Run } from "../driver/run.js";
import type { BuiltScenario } from "../scenario/build.js";
import type { StepperSpec } from "../scenario/schema.js";
import { advanceSteps, defaultLabel, type StudyTracker } from "./common.js";
import { contentHash } from "./hash.js";
import { stateErrors, type StateErrors } from "./metrics.js";
import type { StepperConfig } from "./stability.js";

/** A reference solution at the study's final time, with an estimate of its own error. */
export interface ReferenceRecord {
  key: string;
  /** Identity of the code that computed it (package version and a hash of the solver's source), part of the key. */
  solver: string;
  method: string;
  label: string;
  spec: StepperConfig;
  dt: number;
  steps: number;
  duration: number;
  /** Estimated error of the reference itself, per component: ‖x(2Δt) − x(Δt)‖_rel / (2^p − 1), p its order. */
  floor: StateErrors;
  order: number;
  state: Float64Array;
}

/** Where reference runs are kept between studies. The engine keeps one in memory; the CLI adds a disk layer. */
export interface ReferenceCache {
  get(key: string): ReferenceRecord | undefined;
  set(key: string, record: ReferenceRecord): void;
}

export class MemoryReferenceCache implements ReferenceCache {
  private readonly map = new Map<string, ReferenceRecord>();
  constructor(private readonly capacity = 8) {}
  get(key: string): ReferenceRecord | undefined { return this.map.get(key); }
  set(key: string, record: ReferenceRecord): void {
    this.map.delete(key);
    this.map.set(key, record);
    while (this.map.size > this.capacity) this.map.delete(this.map.keys().next().value as string);
  }
}

/** The engine's shared in-memory cache. */
export const referenceCache = new MemoryReferenceCache();

/** The scenario content that determines the physics of a run (names, descriptions and the scenario's own stepper do not). */
export function physicsContent(built: BuiltScenario): unknown {
  const { mesh, layers, physics, initial } = built.scenario;
  return { mesh, layers, physics, initial };
}

export interface ReferencePlan {
  spec: StepperConfig;
  /** Δt actually used: the duration divided by an even number of steps [s]. */
  dt: number;
  steps: number;
  duration: number;
}

/** Round the requested reference Δt down so that an even number of steps ends exactly at the duration. */
export function planReference(spec: StepperConfig, requestedDt: number, duration: number): ReferencePlan {
  if (!(requestedDt > 0 && Number.isFinite(requestedDt))) throw new SolverError("bad-input", `--reference-dt: must be > 0, got ${requestedDt}`, "--reference-dt");
  const half = Math.max(1, Math.ceil(duration / (2 * requestedDt) - 1e-9));
  return { spec, dt: duration / (2 * half), steps: 2 * half, duration };
}

/**
 * Cache key of a reference run: the physics, the stepper, Δt, the number of steps, the initial state and the
 * identity of the solver code (`solver`, e.g. the package version and a hash of the solver's source), so that a
 * reference computed by other code is never looked up.
 */
export function referenceKey(built: BuiltScenario, plan: ReferencePlan, solver = ""): string {
  const { label: _label, ...spec } = plan.spec;
  return contentHash("stepwell-reference-v2", solver, physicsContent(built), spec, plan.dt, plan.steps, built.initial);
}

/**
 * Checksum of everything a reference record holds (state included), stored with a cached copy and verified when
 * it is read back, so that a damaged or edited copy is recomputed instead of used.
 */
export function referenceChecksum(r: ReferenceRecord): string {
  const { state, ...meta } = r;
  return contentHash("stepwell-reference-checksum-v1", meta, state.length, state);
}

/**
 * The reference state at the final time, from the cache or computed (and then stored). Also runs the same
 * method at twice the Δt to estimate the reference's own error (the floor below which sweep errors mean nothing).
 */
export function referenceRun(built: BuiltScenario, plan: ReferencePlan, cache: ReferenceCache = referenceCache,
  tracker?: StudyTracker, solver = ""): ReferenceRecord {
  const key = referenceKey(built, plan, solver);
  const hit = cache.get(key);
  if (hit) {
    if (tracker) tracker.done += 2;
    return hit;
  }
  const label = plan.spec.label ?? defaultLabel(plan.spec);
  const run = new Run(built, { ...plan.spec, dt: plan.dt } as StepperSpec);
  const advanceAll = (steps: number, what: string) => {
    const chunk = Math.max(1, Math.ceil(steps / 50));
    while (run.steps < steps) {
      if (!advanceSteps(run, Math.min(chunk, steps - run.steps), tracker)) {
        const u = run.unstable!;
        throw new SolverError("bad-input", `--reference-dt: the ${what} (${label}, Δt = ${run.dt} s) became unstable at step ${u.step}: ${u.reason}; choose a smaller reference Δt`, "--reference-dt");
      }
      tracker?.report(`${what} ${label}`, run.steps / steps);
    }
  };
  tracker?.checkpoint();
  advanceAll(plan.steps, "reference run");
  const state = Float64Array.from(run.state);
  if (tracker) tracker.done++;
  tracker?.checkpoint();
  run.setStepper({ ...plan.spec, dt: 2 * plan.dt } as StepperSpec, "--reference-method");
  run.reset();
  advanceAll(plan.steps / 2, "reference check");
  if (tracker) tracker.done++;
  const order = run.stepper.order;
  const { errors } = stateErrors(built.model, run.state, state, built.model.restState());
  const f = 2 ** order - 1;
  const record: ReferenceRecord = {
    key, solver, method: plan.spec.method, label, spec: plan.spec, dt: plan.dt, steps: plan.steps, duration: plan.duration,
    floor: { surface: errors.surface / f, thickness: errors.thickness / f, velocity: errors.velocity / f }, order, state,
  };
  cache.set(key, record);
  return record;
}
