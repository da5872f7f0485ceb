import { SolverError } from "../errors.js";
import { checkListLength, checkRunLength, LIMITS, type Limits } from "../scenario/limits.js";
import { execute } from "../driver/execute.js";
import { Run } from "../driver/run.js";
import type { BuiltScenario } from "../scenario/build.js";
import type { StepperSpec } from "../scenario/schema.js";
import { definitionOf } from "../time/registry.js";
import { defaultLabel, isCancellation, StudyInterrupted, StudyTracker, type StudyHooks } from "./common.js";
import { canonicalJson, contentHash } from "./hash.js";
import { ERROR_COMPONENTS, stateErrors, type ErrorComponent, type LayerErrors, type StateErrors } from "./metrics.js";
import { fitOrder, type OrderFit } from "./orders.js";
import { physicsContent, planReference, referenceCache, referenceRun, type ReferenceCache, type ReferencePlan, type ReferenceRecord } from "./reference.js";
import { checkParts, shardItems, type PartHeader, type Shard } from "./shard.js";
import type { StepperConfig } from "./stability.js";

export interface SweepDefinition {
  steppers: readonly StepperConfig[];
  /** Δt list [s]; or `dtFactors`, multiples of the scenario's RK4 gravity-wave limit. Exactly one of the two. */
  dts?: readonly number[];
  dtFactors?: readonly number[];
  /** Final time of every run [s] (default: the scenario's duration). */
  duration?: number;
  /** Reference stepper (default rk4) and its Δt (default min(smallest Δt / 4, RK4 limit / 2)). */
  referenceSpec?: StepperConfig;
  referenceDt?: number;
  /** Error component the orders and the work-precision answer use (default "thickness"). */
  component?: ErrorComponent;
  /** Requested error for the work-precision answer (default 1e-3). */
  tolerance?: number;
  /** A matvec counts as this many RHS evaluations in the RHS-equivalent cost (default 1). */
  matvecWeight?: number;
  /** Rows with error below floorFactor × the reference's own error estimate are left out of the fits (default 10). */
  floorFactor?: number;
  /** Rows with error above this are left out of the fits as far from asymptotic (default 0.3). */
  maxError?: number;
  /** Name of the argument the steppers came from, for error messages (default "--methods"). */
  field?: string;
  /** Bounds on the study (default LIMITS): steppers, Δt values, steps of every run including the reference. */
  limits?: Limits;
}

/** Everything a sweep's rows and fits depend on, JSON-safe; shards carry it so that merge can finish the study. */
export interface SweepPlan {
  scenario: string;
  duration: number;
  rk4DtLimit: number;
  steppers: { label: string; spec: StepperConfig }[];
  dts: { requested: number; dt: number; steps: number }[];
  reference: ReferencePlan;
  component: ErrorComponent;
  tolerance: number;
  matvecWeight: number;
  floorFactor: number;
  maxError: number;
  nItems: number;
  study: string;
  /** What the plan changed of what was asked for (a Δt clamped to the duration or rounded to whole steps), one line each. */
  warnings: string[];
}

export interface SweepRow {
  label: string;
  method: string;
  dt: number;
  status: "completed" | "unstable" | "cancelled";
  error: { surface: number | null; thickness: number | null; velocity: number | null };
  massDrift: number;
  /** Max relative energy drift; null (with energyDriftReason) for a forced or damped run, or one without energy. */
  energyDrift: number | null;
  energyDriftReason?: string;
  /** Energy-budget residual relative to the largest budget term (null for a run without forcing or dissipation: see energyDrift). */
  energyResidual: number | null;
  wallSeconds: number;
  rhsEvaluations: number;
  matvecs: number;
  /** Δt asked for before rounding to divide the duration [s]. */
  requestedDt: number;
  dtRatioToRk4: number;
  steps: number;
  /** rhsEvaluations + matvecWeight × matvecs. */
  cost: number;
  errorByLayer: { thickness: (number | null)[]; velocity: (number | null)[] };
  /** True if the row's error is within floorFactor of the reference's own error (left out of the fits). */
  atReferenceFloor: boolean;
  unstable?: { step: number; time: number; reason: string };
}

export interface ReferenceSummary {
  method: string;
  dt: number;
  label: string;
  steps: number;
  order: number;
  floor: StateErrors;
}

export interface OrderReport extends OrderFit {
  component: ErrorComponent;
  /** Orders fitted on each error component with the same rule. */
  byComponent: Record<ErrorComponent, number | null>;
}

export interface WorkPrecision {
  tolerance: number;
  component: ErrorComponent;
  matvecWeight: number;
  /** RK4 run over the same duration at the scenario's RK4 gravity-wave limit: 4 RHS per step. */
  rk4AtLimit: { dt: number; steps: number; cost: number };
  /** The completed row of least RHS-equivalent cost with error ≤ tolerance, or null. */
  best: { label: string; method: string; dt: number; error: number; cost: number; wallSeconds: number; speedup: number } | null;
  /** Per label: the cheapest row meeting the tolerance (null if none does). */
  cheapestByLabel: Record<string, { dt: number; error: number; cost: number } | null>;
}

export interface SweepResult {
  kind: "stepwell-sweep";
  status: "completed";
  /** The plan's warnings (see `SweepPlan.warnings`). */
  warnings: string[];
  study: string;
  scenario: string;
  duration: number;
  rk4DtLimit: number;
  reference: ReferenceSummary;
  rows: SweepRow[];
  orders: Record<string, OrderReport>;
  workPrecision: WorkPrecision;
}

export interface SweepPart extends PartHeader {
  kind: "stepwell-sweep-part";
  plan: SweepPlan;
  reference: ReferenceSummary;
  rows: SweepRow[];
}

/** What a stopped sweep (or slice) had finished: the rows of `items`, in order; no fits (they would rest on part of the rows). */
export interface InterruptedSweep {
  kind: "stepwell-sweep" | "stepwell-sweep-part";
  status: "interrupted";
  study: string;
  scenario: string;
  shard?: Shard;
  version?: 1;
  nItems: number;
  /** The work items finished, in the order they ran. */
  items: number[];
  warnings: string[];
  plan: SweepPlan;
  /** null if the reference run itself was stopped. */
  reference: ReferenceSummary | null;
  rows: SweepRow[];
}

/** Relative change of Δt beyond which rounding to whole steps is reported (smaller changes are the usual rounding). */
const ROUNDING_WARNING = 0.01;
const sig = (v: number) => Number(v.toPrecision(4));

const listField = (d: SweepDefinition) => (d.dts ? "--dts" : "--dt-factors");

/** Resolve a definition on a scenario: labels, the Δt actually used (the duration over a whole number of steps), the reference. */
export function planSweep(built: BuiltScenario, def: SweepDefinition): SweepPlan {
  const sf = def.field ?? "--methods";
  if (!def.steppers.length) throw new SolverError("bad-input", `${sf}: give at least one stepper`, sf);
  if ((def.dts === undefined) === (def.dtFactors === undefined)) {
    throw new SolverError("bad-input", "--dts: give exactly one of --dts (seconds) and --dt-factors (multiples of the RK4 limit)", "--dts");
  }
  const raw = (def.dts ?? def.dtFactors)!;
  const field = listField(def);
  if (!raw.length || !raw.every((v) => typeof v === "number" && v > 0 && Number.isFinite(v))) {
    throw new SolverError("bad-input", `${field}: must be a comma-separated list of positive numbers`, field);
  }
  const limits = def.limits ?? LIMITS;
  checkListLength(def.steppers.length, "studyMethods", limits, sf);
  checkListLength(raw.length, "studyDts", limits, field);
  const duration = def.duration ?? built.scenario.duration;
  if (!(duration > 0 && Number.isFinite(duration))) throw new SolverError("bad-input", `--duration: must be > 0, got ${duration}`, "--duration");
  const durationField = def.duration !== undefined ? "--duration" : "duration";
  if (def.dts) for (const d of def.dts) checkRunLength(duration, d, limits, durationField, field);
  const probe = new Run(built, { method: "rk4", dt: 1 });
  const limit = probe.rk4DtLimit();
  if (def.dtFactors) for (const f of def.dtFactors) checkRunLength(duration, f * limit, limits, durationField, field);
  const labels = new Set<string>();
  const steppers = def.steppers.map((s, i) => {
    const f = def.steppers.length > 1 || sf === "--steppers" ? `${sf}[${i}]` : sf;
    definitionOf(s, f);
    probe.setStepper({ ...s, dt: 1 } as StepperSpec, f);
    const label = s.label ?? defaultLabel(s);
    if (labels.has(label)) throw new SolverError("bad-input", `${f}: the label "${label}" is used twice; give each stepper its own label`, f);
    labels.add(label);
    const { dt: _dt, ...spec } = s;
    return { label, spec: spec as StepperConfig };
  });
  const requested = raw.map((v) => (def.dts ? v : v * limit));
  const seen = new Set<number>();
  const warnings: string[] = [];
  const clamped: string[] = [];
  const rounded: string[] = [];
  const dts = requested.map((r, i) => {
    const steps = Math.max(1, Math.round(duration / r));
    if (seen.has(steps)) throw new SolverError("bad-input", `${field}: two entries give the same ${steps} steps over ${duration} s; the list needs distinct Δt`, field);
    seen.add(steps);
    const dt = duration / steps;
    const asked = def.dts ? `${sig(r)} s` : `${sig(raw[i])} × RK4 limit = ${sig(r)} s`;
    if (r > duration) clamped.push(asked);
    else if (Math.abs(dt - r) > ROUNDING_WARNING * r) rounded.push(`${asked} → ${sig(dt)} s (${steps} steps)`);
    return { requested: r, dt, steps };
  });
  if (clamped.length) {
    warnings.push(`${field}: ${clamped.join(", ")} ${clamped.length > 1 ? "are" : "is"} longer than the duration (${sig(duration)} s); ` +
      `${clamped.length > 1 ? "each runs" : "it runs"} as one step of ${sig(duration)} s`);
  }
  if (rounded.length) warnings.push(`${field}: Δt changed by more than ${ROUNDING_WARNING * 100}% to end exactly at the duration (${sig(duration)} s): ${rounded.join(", ")}`);
  const refSpec: StepperConfig = def.referenceSpec ?? { method: "rk4" };
  definitionOf(refSpec, "--reference-method");
  probe.setStepper({ ...refSpec, dt: 1 } as StepperSpec, "--reference-method");
  const minDt = Math.min(...dts.map((d) => d.dt));
  const refDt = def.referenceDt ?? Math.min(minDt / 4, limit / 2);
  checkRunLength(duration, refDt, limits, durationField, def.referenceDt !== undefined ? "--reference-dt" : `${field} (the reference run at a quarter of the smallest Δt)`);
  const reference = planReference(refSpec, refDt, duration);
  if (def.referenceDt !== undefined && Math.abs(reference.dt - def.referenceDt) > ROUNDING_WARNING * def.referenceDt) {
    warnings.push(`--reference-dt: ${sig(def.referenceDt)} s changed to ${sig(reference.dt)} s (${reference.steps} steps, an even number ending exactly at the duration ${sig(duration)} s)`);
  }
  const component = def.component ?? "thickness";
  if (!ERROR_COMPONENTS.includes(component)) throw new SolverError("bad-input", `--error: must be one of ${ERROR_COMPONENTS.join(", ")}`, "--error");
  const tolerance = def.tolerance ?? 1e-3;
  if (!(tolerance > 0 && Number.isFinite(tolerance))) throw new SolverError("bad-input", `--tolerance: the requested error must be > 0, got ${tolerance}`, "--tolerance");
  const matvecWeight = def.matvecWeight ?? 1;
  if (!(matvecWeight >= 0 && Number.isFinite(matvecWeight))) throw new SolverError("bad-input", `--matvec-weight: must be ≥ 0, got ${matvecWeight}`, "--matvec-weight");
  const floorFactor = def.floorFactor ?? 10;
  const maxError = def.maxError ?? 0.3;
  const nItems = steppers.length * dts.length;
  const body = { scenario: built.scenario.name, duration, rk4DtLimit: limit, steppers, dts, reference, component, tolerance, matvecWeight, floorFactor, maxError, nItems };
  const study = contentHash("stepwell-sweep-v1", physicsContent(built), body, built.initial);
  return { ...body, study, warnings };
}

const finiteOr = (v: number): number | null => (Number.isFinite(v) ? v : null);

/**
 * Run the work items of a plan (item k = stepper ⌊k / nΔt⌋ at Δt k mod nΔt), in the order `items` yields them
 * (a list, or a queue that hands out the next item when asked). Each run starts fresh, so any subset gives the same rows.
 */
export function sweepRows(built: BuiltScenario, plan: SweepPlan, ref: ReferenceRecord, items: Iterable<number>, tracker: StudyTracker,
  rows: SweepRow[] = []): SweepRow[] {
  const run = new Run(built, { ...plan.steppers[0].spec, dt: plan.dts[0].dt } as StepperSpec);
  const rest = built.model.restState();
  for (const k of items) {
    const s = plan.steppers[Math.floor(k / plan.dts.length)];
    const d = plan.dts[k % plan.dts.length];
    tracker.checkpoint();
    const item = `${s.label} Δt = ${Number(d.dt.toPrecision(4))} s`;
    tracker.report(item);
    run.setStepper({ ...s.spec, dt: d.dt } as StepperSpec, "--methods");
    run.reset();
    // progress after every step, so that a stop request is seen within one step
    const r = execute(run, { steps: d.steps, chunk: 1, clock: tracker.clock, onProgress: ({ fraction }) => { tracker.report(item, fraction); return !tracker.stopRequested; } });
    if (r.status === "cancelled") throw new SolverError("cancelled", "sweep cancelled");
    const ok = r.status === "completed";
    const e = ok ? stateErrors(built.model, run.state, ref.state, rest) : null;
    const cErr = e ? e.errors[plan.component] : NaN;
    const floor = ref.floor[plan.component];
    rows.push({
      label: s.label, method: s.spec.method, dt: d.dt, status: r.status,
      error: { surface: e ? finiteOr(e.errors.surface) : null, thickness: e ? finiteOr(e.errors.thickness) : null, velocity: e ? finiteOr(e.errors.velocity) : null },
      massDrift: r.mass.maxRelativeDrift, energyDrift: r.energy.maxRelativeDrift,
      ...(r.energy.reason ? { energyDriftReason: r.energy.reason } : {}),
      energyResidual: r.energy.relativeBudgetResidual,
      wallSeconds: r.wallSeconds, rhsEvaluations: r.rhsEvaluations, matvecs: r.matvecs,
      requestedDt: d.requested, dtRatioToRk4: d.dt / plan.rk4DtLimit, steps: r.steps,
      cost: r.rhsEvaluations + plan.matvecWeight * r.matvecs,
      errorByLayer: e ? { thickness: e.layers.thickness.map(finiteOr), velocity: e.layers.velocity.map(finiteOr) } : { thickness: [], velocity: [] },
      atReferenceFloor: ok && cErr < plan.floorFactor * floor,
      ...(r.unstable ? { unstable: { step: r.unstable.step, time: r.unstable.time, reason: r.unstable.reason } } : {}),
    });
    tracker.done++;
  }
  return rows;
}

export function summarizeReference(ref: ReferenceRecord): ReferenceSummary {
  return { method: ref.method, dt: ref.dt, label: ref.label, steps: ref.steps, order: ref.order, floor: { ...ref.floor } };
}

/** Orders and work-precision from complete rows (in item order). Pure; `merge` calls the same function. */
export function finishSweep(plan: SweepPlan, reference: ReferenceSummary, rows: SweepRow[]): SweepResult {
  const orders: Record<string, OrderReport> = {};
  for (const s of plan.steppers) {
    const mine = rows.filter((r) => r.label === s.label);
    const fitOn = (c: ErrorComponent) => fitOrder(mine.map((r) => {
      const e = r.error[c];
      const usable = r.status === "completed" && e !== null && e < plan.maxError && e >= plan.floorFactor * reference.floor[c];
      return { dt: r.dt, error: usable ? e : null };
    }));
    const main = fitOn(plan.component);
    const byComponent = Object.fromEntries(ERROR_COMPONENTS.map((c) => [c, c === plan.component ? main.order : fitOn(c).order])) as Record<ErrorComponent, number | null>;
    orders[s.label] = { ...main, component: plan.component, byComponent };
  }
  const rk4Steps = Math.ceil(plan.duration / plan.rk4DtLimit - 1e-9);
  const rk4AtLimit = { dt: plan.rk4DtLimit, steps: rk4Steps, cost: 4 * rk4Steps };
  let best: WorkPrecision["best"] = null;
  const cheapestByLabel: WorkPrecision["cheapestByLabel"] = {};
  for (const s of plan.steppers) cheapestByLabel[s.label] = null;
  for (const r of rows) {
    const e = r.error[plan.component];
    if (r.status !== "completed" || e === null || !(e <= plan.tolerance)) continue;
    const c = cheapestByLabel[r.label];
    if (!c || r.cost < c.cost) cheapestByLabel[r.label] = { dt: r.dt, error: e, cost: r.cost };
    if (!best || r.cost < best.cost) {
      best = { label: r.label, method: r.method, dt: r.dt, error: e, cost: r.cost, wallSeconds: r.wallSeconds, speedup: rk4AtLimit.cost / r.cost };
    }
  }
  return {
    kind: "stepwell-sweep", status: "completed", warnings: [...(plan.warnings ?? [])], study: plan.study, scenario: plan.scenario, duration: plan.duration, rk4DtLimit: plan.rk4DtLimit,
    reference, rows, orders,
    workPrecision: { tolerance: plan.tolerance, component: plan.component, matvecWeight: plan.matvecWeight, rk4AtLimit, best, cheapestByLabel },
  };
}

export interface SweepRunOptions extends StudyHooks {
  cache?: ReferenceCache;
  shard?: Shard;
  /** Identity of the solver code, part of the reference's cache key (see `referenceKey`). */
  solver?: string;
}

/**
 * A whole sweep (or one slice of it, as a partial result for `mergeSweepParts`). The plan's warnings go to
 * `onWarning` before any work. Stopped through the hooks, it throws `StudyInterrupted<InterruptedSweep>`.
 */
export function runSweep(built: BuiltScenario, def: SweepDefinition, o: SweepRunOptions & { shard: Shard }): SweepPart;
export function runSweep(built: BuiltScenario, def: SweepDefinition, o?: SweepRunOptions): SweepResult;
export function runSweep(built: BuiltScenario, def: SweepDefinition, o: SweepRunOptions = {}): SweepResult | SweepPart {
  const plan = planSweep(built, def);
  const items = o.shard ? shardItems(plan.nItems, o.shard) : Array.from({ length: plan.nItems }, (_, k) => k);
  const tracker = new StudyTracker(o, items.length + 2);
  for (const w of plan.warnings) tracker.warn(w);
  const rows: SweepRow[] = [];
  let ref: ReferenceRecord | null = null;
  try {
    ref = referenceRun(built, plan.reference, o.cache ?? referenceCache, tracker, o.solver);
    sweepRows(built, plan, ref, items, tracker, rows);
  } catch (e) {
    if (!isCancellation(e)) throw e;
    const partial: InterruptedSweep = {
      kind: o.shard ? "stepwell-sweep-part" : "stepwell-sweep", status: "interrupted", study: plan.study, scenario: plan.scenario,
      ...(o.shard ? { shard: o.shard, version: 1 as const } : {}), nItems: plan.nItems, items: items.slice(0, rows.length), warnings: plan.warnings, plan,
      reference: ref ? summarizeReference(ref) : null, rows,
    };
    throw new StudyInterrupted(partial, rows.length, items.length);
  }
  tracker.report("done");
  const reference = summarizeReference(ref);
  if (!o.shard) return finishSweep(plan, reference, rows);
  return { kind: "stepwell-sweep-part", version: 1, study: plan.study, shard: o.shard, nItems: plan.nItems, items, plan, reference, rows };
}

/** Join the slices of a sharded sweep into exactly the result the unsharded sweep gives. */
export function mergeSweepParts(parts: readonly SweepPart[]): SweepResult {
  const sorted = checkParts(parts, "stepwell-sweep-part");
  const byItem = new Map<number, SweepRow>();
  for (const p of sorted) {
    if (p.rows.length !== p.items.length) throw new SolverError("bad-input", `PARTS: slice ${p.shard.index}/${p.shard.count} has ${p.rows.length} rows for ${p.items.length} items`, "PARTS");
    p.items.forEach((k, j) => byItem.set(k, p.rows[j]));
  }
  const refText = canonicalJson(sorted[0].reference);
  for (const p of sorted) {
    if (canonicalJson(p.reference) !== refText) throw new SolverError("bad-input", `PARTS: slice ${p.shard.index}/${p.shard.count} used a different reference run`, "PARTS");
  }
  const rows = Array.from({ length: sorted[0].nItems }, (_, k) => byItem.get(k)!);
  return finishSweep(sorted[0].plan, sorted[0].reference, rows);
}

export type { LayerErrors };
