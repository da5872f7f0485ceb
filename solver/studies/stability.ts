import { SolverError } from "../errors.js";
import { checkRunLength, checkStepCount, LIMITS, withLimits } from "../scenario/limits.js";
import { Run } from "../driver/run.js";
import type { BuiltScenario } from "../scenario/build.js";
import type { StepperSpec } from "../scenario/schema.js";
import { definitionOf } from "../time/registry.js";
import { seededRandom } from "../mesh/hexLattice.js";
import { advanceSteps, defaultLabel, isCancellation, StudyInterrupted, StudyTracker, type StudyHooks } from "./common.js";
import { contentHash } from "./hash.js";
import { physicsContent } from "./reference.js";
import { checkParts, shardItems, type PartHeader, type Shard } from "./shard.js";

/** A stepper without its Δt: the method, its options and an optional label. */
export interface StepperConfig { method: string; label?: string; dt?: number; [option: string]: unknown }

export interface StabilityOptions {
  /** Simulated length of every trial [s]; default min(scenario duration, 300 × the RK4 gravity-wave limit). */
  duration?: number;
  /** Every trial runs at least this many steps, even at large Δt (default 50). */
  minSteps?: number;
  /** Relative width of the final bracket, (hi − lo)/lo (default 0.01). */
  tolerance?: number;
  /** Largest allowed relative energy growth over the energy scale (default 0.1). */
  energyGrowth?: number;
  /** First Δt tried [s]; default the RK4 limit scaled by the method's imaginary-axis bound (or the RK4 limit). */
  startDt?: number;
  /** At most this many doublings or halvings while bracketing (default 12). */
  maxBracketSteps?: number;
  /** Steps of one trial at most (default LIMITS.steps); halving stops before a trial would need more. */
  maxSteps?: number;
  /**
   * Seeded grid-scale noise added to every layer thickness before the trials, as a fraction of the layer's
   * nominal thickness (default 1e-6; 0 = none). A smooth initial state barely projects on the fastest grid
   * mode, so without it a short trial can pass well above the linear limit.
   */
  perturbation?: number;
}

export interface StabilityTrial {
  dt: number;
  ratioToRk4: number;
  outcome: "stable" | "unstable";
  reason: string;
  steps: number;
  simulatedSeconds: number;
  /** max_t E(t)/S − 1 with S the energy scale (see `stabilitySearch`); null if the run blew up first. */
  energyGrowth: number | null;
}

export interface StabilityResult {
  method: string;
  label: string;
  /** Largest Δt that passed [s]; 0 if none did. */
  maxStableDt: number;
  /** maxStableDt divided by the scenario's RK4 gravity-wave limit 2√2/ω_max. */
  ratioToRk4: number;
  rk4DtLimit: number;
  /** False if no unstable Δt was found (the limit is at least maxStableDt) or no stable one. */
  bracketed: boolean;
  tolerance: number;
  duration: number;
  energyGrowthThreshold: number;
  /** Relative size of the seeded thickness noise added before the trials. */
  perturbation: number;
  /** "initial" (E0) or "reference-run" (largest energy of an RK4 run at half its limit, for forced or resting starts). */
  energyScale: "initial" | "reference-run";
  trials: StabilityTrial[];
}

export interface ResolvedStabilityOptions {
  duration: number;
  minSteps: number;
  tolerance: number;
  energyGrowth: number;
  startDt?: number;
  maxBracketSteps: number;
  perturbation: number;
  maxSteps: number;
}

export function resolveStabilityOptions(run: Run, o: StabilityOptions = {}): ResolvedStabilityOptions {
  const s = run.built.scenario;
  const r = {
    duration: o.duration ?? Math.min(s.duration, 300 * run.rk4DtLimit()),
    minSteps: o.minSteps ?? 50,
    tolerance: o.tolerance ?? 0.01,
    energyGrowth: o.energyGrowth ?? 0.1,
    startDt: o.startDt,
    maxBracketSteps: o.maxBracketSteps ?? 12,
    perturbation: o.perturbation ?? 1e-6,
    maxSteps: o.maxSteps ?? LIMITS.steps,
  };
  const limits = withLimits({ steps: r.maxSteps });
  if (r.duration > limits.duration) checkRunLength(r.duration, 1, limits, "--duration", "--duration");
  if (!(r.minSteps <= r.maxSteps)) checkStepCount(r.minSteps, limits, "--min-steps");
  if (r.startDt !== undefined && r.startDt > 0) checkRunLength(r.duration, r.startDt, limits, "--duration", "--start-dt");
  if (!(r.perturbation >= 0 && r.perturbation < 0.1)) throw new SolverError("bad-input", `--perturbation: must lie in [0, 0.1), got ${r.perturbation}`, "--perturbation");
  if (!(r.duration > 0 && Number.isFinite(r.duration))) throw new SolverError("bad-input", `--duration: must be > 0, got ${r.duration}`, "--duration");
  if (!(r.tolerance > 0 && r.tolerance < 1)) throw new SolverError("bad-input", `--tolerance: the relative tolerance of the limit must lie in (0, 1), got ${r.tolerance}`, "--tolerance");
  if (!(r.energyGrowth > 0 && Number.isFinite(r.energyGrowth))) throw new SolverError("bad-input", `--energy-growth: must be > 0, got ${r.energyGrowth}`, "--energy-growth");
  if (!(Number.isInteger(r.minSteps) && r.minSteps >= 1)) throw new SolverError("bad-input", `--min-steps: must be a whole number ≥ 1, got ${r.minSteps}`, "--min-steps");
  if (r.startDt !== undefined && !(r.startDt > 0 && Number.isFinite(r.startDt))) throw new SolverError("bad-input", `--start-dt: must be > 0, got ${r.startDt}`, "--start-dt");
  return r;
}

/**
 * The energy scale S a trial is measured against. Unforced runs that start with energy use S = E0. Runs with
 * wind forcing, or starting from rest, use the largest energy an RK4 run at half its gravity-wave limit reaches
 * up to the trial's end time (extended lazily and shared by all trials, so results do not depend on their order).
 */
export class EnergyScale {
  readonly kind: "initial" | "reference-run";
  readonly e0: number;
  private base: Run | null = null;
  private maxE: number;
  private baseFailed = false;

  constructor(private readonly built: BuiltScenario) {
    const probe = new Run(built, { method: "rk4", dt: 1 });
    this.e0 = probe.budget().energy;
    const forced = built.model.params.windStress !== null;
    this.kind = forced || !(this.e0 > 0) ? "reference-run" : "initial";
    this.maxE = this.e0;
    if (this.kind === "reference-run") {
      this.base = probe;
      probe.setStepper({ method: "rk4", dt: probe.rk4DtLimit() / 2 });
    }
  }

  /** S for a trial that ends at time t (throws a cancellation if the tracker asks to stop while the base run advances). */
  at(t: number, tracker?: StudyTracker): number {
    const b = this.base;
    if (b) {
      while (b.time < t * (1 - 1e-12) && !this.baseFailed) {
        tracker?.checkpoint();
        if (!b.advance(1)) { this.baseFailed = true; break; }
        const e = b.budget().energy;
        if (e > this.maxE) this.maxE = e;
      }
    }
    return this.maxE > 0 ? this.maxE : Number.MIN_VALUE;
  }
}

const pretty = (v: number, d = 3) => (Math.abs(v) >= 1e4 || (v !== 0 && Math.abs(v) < 1e-3) ? v.toExponential(d - 1) : Number(v.toPrecision(d)).toString());

/** One trial: run `spec` at Δt for the simulated length and judge it. The run is reset first. */
export function stabilityTrial(run: Run, scale: EnergyScale, config: StepperConfig, dt: number, o: ResolvedStabilityOptions,
  within?: (fraction: number) => void, tracker?: StudyTracker): StabilityTrial {
  run.setStepper({ ...config, dt } as StepperSpec, "--method");
  run.reset();
  const limit = run.rk4DtLimit();
  const steps = Math.max(Math.ceil(o.duration / dt - 1e-9), o.minSteps);
  const S = scale.at(steps * dt, tracker);
  const chunk = Math.max(1, Math.ceil(steps / 20));
  let maxE = run.budget().energy;
  const base = { dt, ratioToRk4: dt / limit };
  while (run.steps < steps) {
    const ok = advanceSteps(run, Math.min(chunk, steps - run.steps), tracker);
    if (!ok) {
      const u = run.unstable!;
      return { ...base, outcome: "unstable", reason: `step ${u.step} (t = ${pretty(u.time)} s): ${u.reason}`, steps: run.steps, simulatedSeconds: run.time, energyGrowth: null };
    }
    const e = run.budget().energy;
    if (!Number.isFinite(e)) {
      return { ...base, outcome: "unstable", reason: `step ${run.steps}: energy became ${e}`, steps: run.steps, simulatedSeconds: run.time, energyGrowth: null };
    }
    if (e > maxE) maxE = e;
    const growth = maxE / S - 1;
    if (growth > o.energyGrowth) {
      return { ...base, outcome: "unstable", reason: `energy grew ${pretty(growth)} above its scale by step ${run.steps} (threshold ${o.energyGrowth})`,
        steps: run.steps, simulatedSeconds: run.time, energyGrowth: growth };
    }
    within?.(run.steps / steps);
  }
  const growth = maxE / S - 1;
  return { ...base, outcome: "stable", reason: `${steps} steps (${pretty(run.time)} s) finite and positive; energy growth ${pretty(growth)} ≤ ${o.energyGrowth}`,
    steps: run.steps, simulatedSeconds: run.time, energyGrowth: growth };
}

/** Expected number of trials of one search, for progress estimates. */
export function expectedTrials(o: ResolvedStabilityOptions): number {
  return 2 + Math.ceil(Math.log2(1 / o.tolerance));
}

/**
 * Largest stable Δt of one stepper: bracket by doubling (or halving) from the start Δt, then bisect until
 * (hi − lo)/lo ≤ tolerance. A trial passes if every state stays finite with positive thicknesses and the
 * energy never exceeds (1 + threshold) times its scale. Deterministic: each trial starts from the initial state
 * with a fresh stepper.
 */
export function stabilitySearch(run: Run, scale: EnergyScale, config: StepperConfig, o: ResolvedStabilityOptions,
  tracker?: StudyTracker): StabilityResult {
  const entry = definitionOf(config, "--method");
  const limit = run.rk4DtLimit();
  const label = config.label ?? defaultLabel(config);
  const trials: StabilityTrial[] = [];
  const trial = (dt: number): boolean => {
    tracker?.checkpoint();
    tracker?.report(`${label} Δt = ${pretty(dt)} s`);
    const t = stabilityTrial(run, scale, config, dt, o, (f) => tracker?.report(`${label} Δt = ${pretty(dt)} s`, f), tracker);
    trials.push(t);
    if (tracker) tracker.done++;
    return t.outcome === "stable";
  };
  const start = o.startDt ?? (entry.imaginaryAxisBound ? (limit * entry.imaginaryAxisBound) / (2 * Math.SQRT2) : limit);
  let lo = 0;
  let hi = Infinity;
  if (trial(start)) {
    lo = start;
    for (let k = 0; k < o.maxBracketSteps && hi === Infinity; k++) {
      const dt = lo * 2;
      if (trial(dt)) lo = dt; else hi = dt;
    }
  } else {
    hi = start;
    for (let k = 0; k < o.maxBracketSteps && lo === 0 && o.duration / (hi / 2) <= o.maxSteps; k++) {
      const dt = hi / 2;
      if (trial(dt)) lo = dt; else hi = dt;
    }
  }
  const bracketed = lo > 0 && hi < Infinity;
  if (bracketed) {
    while ((hi - lo) / lo > o.tolerance) {
      const mid = 0.5 * (lo + hi);
      if (trial(mid)) lo = mid; else hi = mid;
    }
  }
  return {
    method: config.method, label, maxStableDt: lo, ratioToRk4: lo / limit, rk4DtLimit: limit, bracketed,
    tolerance: o.tolerance, duration: o.duration, energyGrowthThreshold: o.energyGrowth, perturbation: o.perturbation, energyScale: scale.kind, trials,
  };
}

/**
 * The scenario with seeded noise of relative size `amplitude` on every layer thickness, zero area-weighted mean per
 * layer so that the layer volumes are unchanged.
 */
export function perturbedScenario(built: BuiltScenario, amplitude: number, seed = 20240611): BuiltScenario {
  if (amplitude === 0) return built;
  const { nLayers: L, nCells: nc } = built.model.layout;
  const A = built.mesh.cellArea;
  const H = built.model.params.nominalThickness;
  const initial = Float64Array.from(built.initial);
  const rnd = seededRandom(seed);
  const noise = new Float64Array(nc);
  for (let k = 0; k < L; k++) {
    let sum = 0; let area = 0;
    for (let i = 0; i < nc; i++) { noise[i] = amplitude * H[k] * (rnd() - 0.5); sum += A[i] * noise[i]; area += A[i]; }
    for (let i = 0; i < nc; i++) initial[k * nc + i] += noise[i] - sum / area;
  }
  return { ...built, initial };
}

/**
 * Stability searches for several steppers on one scenario, sharing the run and the energy scale. Stopped through
 * the hooks, it throws `StudyInterrupted` whose `partial` holds the searches that finished (a search cut short
 * is left out: its bracket is not a result).
 */
export function stabilityStudy(original: BuiltScenario, configs: readonly StepperConfig[], options: StabilityOptions = {},
  hooks: StudyHooks = {}, field = "--method"): StabilityResult[] {
  if (!configs.length) throw new SolverError("bad-input", "--method: give at least one method", "--method");
  const o = resolveStabilityOptions(new Run(original, { method: "rk4", dt: 1 }), options);
  const built = perturbedScenario(original, o.perturbation);
  const run = new Run(built, { ...configs[0], dt: 1 } as StepperSpec);
  // validate every stepper before any work
  configs.forEach((c, i) => { run.setStepper({ ...c, dt: 1 } as StepperSpec, configs.length > 1 || field === "--steppers" ? `${field}[${i}]` : field); });
  const scale = new EnergyScale(built);
  const tracker = new StudyTracker(hooks, configs.length * expectedTrials(o));
  const out: StabilityResult[] = [];
  try {
    configs.forEach((c, i) => {
      out.push(stabilitySearch(run, scale, c, o, tracker));
      tracker.total = Math.max(tracker.done + (configs.length - i - 1) * expectedTrials(o), tracker.done);
    });
  } catch (e) {
    if (isCancellation(e)) throw new StudyInterrupted(out, out.length, configs.length);
    throw e;
  }
  tracker.report("done");
  return out;
}

export interface StabilityPart extends PartHeader {
  kind: "stepwell-stability-part";
  /** One result per item of this slice, in the order of `items`. */
  results: StabilityResult[];
}

export interface StabilityRunOptions extends StudyHooks {
  shard?: Shard;
  /** Name of the argument the steppers came from, for error messages (default "--method"). */
  field?: string;
}

/** Check a stability study's steppers and options before any work (every error names its field); returns the resolved options. */
export function checkStability(built: BuiltScenario, configs: readonly StepperConfig[], options: StabilityOptions = {}, field = "--method"): ResolvedStabilityOptions {
  if (!configs.length) throw new SolverError("bad-input", "--method: give at least one method", "--method");
  const probe = new Run(built, { method: "rk4", dt: 1 });
  const resolved = resolveStabilityOptions(probe, options);
  configs.forEach((c, i) => { probe.setStepper({ ...c, dt: 1 } as StepperSpec, configs.length > 1 || field === "--steppers" ? `${field}[${i}]` : field); });
  return resolved;
}

/** Stability study as the CLI runs it: whole, or one slice (items = steppers) as a partial result. */
export function runStability(built: BuiltScenario, configs: readonly StepperConfig[], options: StabilityOptions, o: StabilityRunOptions & { shard: Shard }): StabilityPart;
export function runStability(built: BuiltScenario, configs: readonly StepperConfig[], options?: StabilityOptions, o?: StabilityRunOptions): StabilityResult[];
export function runStability(built: BuiltScenario, configs: readonly StepperConfig[], options: StabilityOptions = {}, o: StabilityRunOptions = {}): StabilityResult[] | StabilityPart {
  const field = o.field ?? "--method";
  const resolved = checkStability(built, configs, options, field);
  if (!o.shard) return stabilityStudy(built, configs, options, o, field);
  const items = shardItems(configs.length, o.shard);
  const study = contentHash("stepwell-stability-v1", physicsContent(built), configs, resolved, built.initial);
  const header = { kind: "stepwell-stability-part" as const, version: 1 as const, study, shard: o.shard, nItems: configs.length };
  let results: StabilityResult[];
  try {
    results = items.length ? stabilityStudy(built, items.map((k) => configs[k]), options, o, field) : [];
  } catch (e) {
    if (!(e instanceof StudyInterrupted)) throw e;
    const done = e.partial as StabilityResult[];
    // an interrupted slice records only the items it finished and is marked so that `merge` refuses it
    throw new StudyInterrupted<StabilityPart>({ ...header, status: "interrupted", items: items.slice(0, done.length), results: done }, done.length, items.length);
  }
  return { ...header, items, results };
}

/** Join stability slices into the unsharded list of results (in the order the steppers were given). */
export function mergeStabilityParts(parts: readonly StabilityPart[]): StabilityResult[] {
  const sorted = checkParts(parts, "stepwell-stability-part");
  const byItem = new Map<number, StabilityResult>();
  for (const p of sorted) p.items.forEach((k, j) => byItem.set(k, p.results[j]));
  return Array.from({ length: sorted[0].nItems }, (_, k) => byItem.get(k)!);
}
