/**
 * The work of the sandbox's studies, split into independent items so that a pool of workers can share it. Each
 * function here is what one worker does for one message; none keeps state except a small cache of built
 * scenarios and the reference runs it was handed. Assembling the items in item order gives exactly what the
 * CLI's `stability` and `sweep` compute for the same inputs (the same engine functions the CLI's `--shard`
 * slices call; a test checks the equality).
 */
import { SolverError } from "../solver/errors.js";
import { buildScenario, type BuiltScenario } from "../solver/scenario/build.js";
import { parseScenario } from "../solver/scenario/schema.js";
import { canonicalJson, contentHash } from "../solver/studies/hash.js";
import { StudyTracker, type StudyProgress } from "../solver/studies/common.js";
import { parseMethodList } from "../solver/studies/methodList.js";
import { referenceCache, referenceRun, type ReferenceRecord } from "../solver/studies/reference.js";
import { Run } from "../solver/driver/run.js";
import type { StepperSpec } from "../solver/scenario/schema.js";
import { resolveStabilityOptions, stabilityStudy, type StabilityOptions, type StabilityResult, type StepperConfig } from "../solver/studies/stability.js";
import {
  finishSweep, planSweep, summarizeReference, sweepRows,
  type ReferenceSummary, type SweepDefinition, type SweepPlan, type SweepResult, type SweepRow,
} from "../solver/studies/sweep.js";

export type { ReferenceRecord, ReferenceSummary, StabilityOptions, StabilityResult, StepperConfig, SweepDefinition, SweepPlan, SweepResult, SweepRow };

/** Progress inside one work item: fraction of the item done (0…1) and what runs now. */
export type ItemProgress = (fraction: number, item: string) => void;

const built = new Map<string, BuiltScenario>();

/** Validate and build a scenario object, cached by content (a study sends the same scenario with every item). */
export function builtScenario(raw: unknown): BuiltScenario {
  const key = contentHash("sandbox-study-scenario", canonicalJson(raw));
  let b = built.get(key);
  if (!b) {
    b = buildScenario(parseScenario(raw));
    built.clear(); // one scenario at a time: a mesh is the largest thing a worker holds
    built.set(key, b);
  }
  return b;
}

/** The steppers of a study from the method-list syntax (`rk4,etdrk4(linear=modes:1;backend=krylov)`). */
export function parseSteppers(text: string, field = "steppers"): StepperConfig[] {
  return parseMethodList(text, field);
}

function tracker(onItem: ItemProgress | undefined): StudyTracker {
  return new StudyTracker({
    clock: () => performance.now() / 1000,
    onProgress: onItem ? (p: StudyProgress) => onItem(p.fraction, p.item) : undefined,
  }, 1);
}

// ── stability ────────────────────────────────────────────────────────────────────────────────────────────────

export interface StabilityRequest {
  scenario: unknown;
  steppers: StepperConfig[];
  options: StabilityOptions;
}

/** Check a stability study before any work (the options on the scenario, every stepper built once, as the CLI does). */
export function planStability(req: StabilityRequest): { items: number; rk4DtLimit: number } {
  const b = builtScenario(req.scenario);
  if (!req.steppers.length) throw new SolverError("bad-input", "steppers: give at least one method", "steppers");
  const probe = new Run(b, { method: "rk4", dt: 1 });
  resolveStabilityOptions(probe, req.options);
  req.steppers.forEach((c, i) => { probe.setStepper({ ...c, dt: 1 } as StepperSpec, req.steppers.length > 1 ? `steppers[${i}]` : "steppers"); });
  return { items: req.steppers.length, rk4DtLimit: probe.rk4DtLimit() };
}

/** Item k of a stability study: the search for stepper k, as `runStability` does it for that stepper. */
export function stabilityItem(req: StabilityRequest, k: number, onItem?: ItemProgress): StabilityResult {
  const b = builtScenario(req.scenario);
  const field = req.steppers.length > 1 ? `steppers[${k}]` : "steppers";
  const [r] = stabilityStudy(b, [req.steppers[k]], req.options, {
    clock: () => performance.now() / 1000,
    onProgress: onItem ? (p) => onItem(p.fraction, p.item) : undefined,
  }, field);
  return r;
}

// ── sweep ────────────────────────────────────────────────────────────────────────────────────────────────────

export interface SweepRequest {
  scenario: unknown;
  definition: SweepDefinition;
}

/** Resolve a sweep (labels, Δt rounded to whole steps, reference), with the CLI's checks and warnings. */
export function planSweepStudy(req: SweepRequest): SweepPlan {
  return planSweep(builtScenario(req.scenario), { field: "steppers", ...req.definition });
}

/** The reference run of a sweep (the fine run and its check at twice the Δt); the state is transferred back. */
export function sweepReference(req: SweepRequest, plan: SweepPlan, onItem?: ItemProgress): ReferenceRecord {
  const b = builtScenario(req.scenario);
  const t = new StudyTracker({ clock: () => performance.now() / 1000, onProgress: onItem ? (p) => onItem(p.fraction, p.item) : undefined }, 2);
  return referenceRun(b, plan.reference, referenceCache, t);
}

/** Hand a worker the reference another worker computed (so that no worker repeats the most expensive run). */
export function adoptReference(record: ReferenceRecord): void {
  referenceCache.set(record.key, record);
}

/** Item k of a sweep: stepper ⌊k / nΔt⌋ at Δt k mod nΔt, from a fresh start, with its errors against the reference. */
export function sweepItem(req: SweepRequest, plan: SweepPlan, k: number, onItem?: ItemProgress): SweepRow {
  const b = builtScenario(req.scenario);
  const ref = referenceRun(b, plan.reference, referenceCache); // a cache hit after adoptReference
  const t = tracker(onItem);
  const rows = sweepRows(b, plan, ref, [k], t);
  return rows[0];
}

/** Orders and work-precision from the rows in item order: the CLI's own final step. */
export function finishSweepStudy(plan: SweepPlan, reference: ReferenceSummary, rows: SweepRow[]): SweepResult {
  return finishSweep(plan, reference, rows);
}

export { summarizeReference };
