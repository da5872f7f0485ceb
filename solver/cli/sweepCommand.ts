import { SolverError } from "../errors.js";
import { checkListLength } from "../scenario/limits.js";
import { LIMIT_OPTIONS, LIMIT_USAGE, limitsFromArgs } from "./limitArgs.js";
import { buildScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import type { ErrorComponent } from "../studies/metrics.js";
import { referenceRun, type ReferenceCache, type ReferenceRecord } from "../studies/reference.js";
import { parseShard, type Shard } from "../studies/shard.js";
import { mergeSweepParts, planSweep, runSweep, summarizeReference, sweepRows, type InterruptedSweep, type SweepDefinition, type SweepPart, type SweepResult, type SweepRow } from "../studies/sweep.js";
import { isCancellation, StudyInterrupted, StudyTracker, type StudyHooks } from "../studies/common.js";
import type { BuiltScenario } from "../scenario/build.js";
import { jobsForShard, runTasks } from "./jobs.js";
import { referenceCache } from "../studies/reference.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { NEVER_STOP, type CliContext } from "./context.js";
import { fmt, loadScenarioArg, table, writeJson, writeText } from "./io.js";
import { cacheDirectory, DiskReferenceCache } from "./referenceStore.js";
import { solverIdentity } from "./solverIdentity.js";
import { numberList, parseMethodList, progressReporter, reportInterrupted, steppersFromArgs } from "./studyArgs.js";

export const SWEEP_USAGE =
  "sweep SCENARIO (--methods LIST | --steppers FILE) (--dts d1,d2,… | --dt-factors f1,f2,…) [--reference-dt S] [--reference-method M] " +
  "[--duration S] [--error surface|thickness|velocity] [--tolerance E] [--matvec-weight W] [--json FILE] [--csv FILE] [--shard i/n] [--jobs N] [--reference-only] [--no-cache] " +
  LIMIT_USAGE;

const CSV_HEADER = ["label", "method", "dt", "dtRatioToRk4", "status", "errorSurface", "errorThickness", "errorVelocity", "massDrift", "energyDrift",
  "energyResidual", "wallSeconds", "rhsEvaluations", "matvecs", "cost", "atReferenceFloor"];

export function sweepCsv(rows: SweepRow[]): string {
  const q = (s: string) => (/[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
  const n = (v: number | null) => (v === null || !Number.isFinite(v) ? "" : String(v));
  return [CSV_HEADER.join(","), ...rows.map((r) => [q(r.label), q(r.method), n(r.dt), n(r.dtRatioToRk4), r.status, n(r.error.surface), n(r.error.thickness),
    n(r.error.velocity), n(r.massDrift), n(r.energyDrift), n(r.energyResidual), n(r.wallSeconds), n(r.rhsEvaluations), n(r.matvecs), n(r.cost), String(r.atReferenceFloor)].join(","))].join("\n") + "\n";
}

export function printSweep(rows: SweepRow[], out: (s: string) => void, result?: SweepResult): void {
  const e = (v: number | null) => (v === null ? "—" : fmt(v, "", 3));
  out(table(["stepper", "Δt", "× RK4", "status", "err η", "err h", "err u", "mass drift", "energy drift", "energy residual", "wall", "RHS", "matvecs"],
    rows.map((r) => [r.label, fmt(r.dt, "s"), fmt(r.dtRatioToRk4, "", 3), r.status + (r.atReferenceFloor ? " (floor)" : ""), e(r.error.surface), e(r.error.thickness),
      e(r.error.velocity), fmt(r.massDrift, "", 2), r.energyDrift === null ? "n/a" : fmt(r.energyDrift, "", 2),
      r.energyResidual === null ? "n/a" : fmt(r.energyResidual, "", 2), fmt(r.wallSeconds, "s", 3), String(r.rhsEvaluations), String(r.matvecs)])));
  const why = rows.find((r) => r.energyDriftReason)?.energyDriftReason;
  if (why) out(`energy drift n/a: ${why}; "energy residual" is the budget residual relative to the largest budget term.`);
  if (!result) return;
  out("");
  out(`Reference ${result.reference.label} at Δt = ${fmt(result.reference.dt, "s")} (${result.reference.steps} steps); its own error ≈ ${fmt(result.reference.floor[result.workPrecision.component], "", 2)} (${result.workPrecision.component}).`);
  for (const [label, o] of Object.entries(result.orders)) {
    out(`Observed order ${label}: ${o.order === null ? "n/a" : fmt(o.order, "", 3)}` +
      (o.range ? ` on Δt ${fmt(o.range[0], "s")} … ${fmt(o.range[1], "s")} (${o.points} rows, ${o.component} error)` : ` — ${o.note ?? ""}`));
  }
  const w = result.workPrecision;
  out(w.best
    ? `Cheapest run with ${w.component} error ≤ ${w.tolerance}: ${w.best.label} at Δt = ${fmt(w.best.dt, "s")} (error ${fmt(w.best.error, "", 3)}, cost ${fmt(w.best.cost, "RHS", 4)}); ` +
      `speed-up ${fmt(w.best.speedup, "×", 3)} over RK4 at its limit (${fmt(w.rk4AtLimit.dt, "s")}, ${w.rk4AtLimit.cost} RHS)`
    : `No run reached a ${w.component} error ≤ ${w.tolerance}.`);
}

export function sweepDefinition(args: ParsedArgs, duration: number | undefined): SweepDefinition {
  const limits = limitsFromArgs(args);
  const steppers = steppersFromArgs(args, null, ["methods"]);
  const field = args.options.has("steppers") ? "--steppers" : "--methods";
  checkListLength(steppers.length, "studyMethods", limits, field);
  const dts = numberList(args, "dts");
  const dtFactors = numberList(args, "dt-factors");
  if (dts) checkListLength(dts.length, "studyDts", limits, "--dts");
  if (dtFactors) checkListLength(dtFactors.length, "studyDts", limits, "--dt-factors");
  if (dts && dtFactors) throw new SolverError("bad-input", "--dts: give either --dts (seconds) or --dt-factors (multiples of the RK4 limit), not both", "--dts");
  if (!dts && !dtFactors) throw new SolverError("bad-input", "--dts: give the time steps with --dts d1,d2,… (seconds) or --dt-factors f1,f2,… (multiples of the RK4 limit)", "--dts");
  const refMethod = stringOption(args, "reference-method");
  let referenceSpec;
  if (refMethod !== undefined) {
    const list = parseMethodList(refMethod, "--reference-method");
    if (list.length !== 1) throw new SolverError("bad-input", "--reference-method: give one method", "--reference-method");
    referenceSpec = list[0];
  }
  const component = stringOption(args, "error") as ErrorComponent | undefined;
  const tolerance = numberOption(args, "tolerance");
  if (tolerance !== undefined && !(tolerance > 0)) throw new SolverError("bad-input", `--tolerance: the requested error must be > 0, got ${tolerance}`, "--tolerance");
  const matvecWeight = numberOption(args, "matvec-weight");
  if (matvecWeight !== undefined && !(matvecWeight >= 0)) throw new SolverError("bad-input", `--matvec-weight: must be ≥ 0, got ${matvecWeight}`, "--matvec-weight");
  return { limits, steppers, field, dts, dtFactors, duration, referenceSpec, referenceDt: numberOption(args, "reference-dt", { positive: true }), component, tolerance, matvecWeight };
}

/** What a sweep's worker gets: the reference run (computed once by the caller) and the shared queue of work items. */
interface SweepSlicePayload {
  reference: ReferenceRecord;
  /** The work items, most time steps first; `next[0]` is the position of the next one to take (shared by all workers). */
  order: number[];
  next: Int32Array;
}

/**
 * One worker's share of a sweep (`--jobs`): it takes the next item of the shared queue until none are left
 * (largest first, so that the long runs start early and the short ones fill in: the workers end close together),
 * and returns its rows as a partial result for `mergeSweepParts`, which puts every row in its place.
 */
export function sweepSlice(args: ParsedArgs, shard: Shard, payload: unknown, hooks: StudyHooks): SweepPart {
  const { reference, order, next } = payload as SweepSlicePayload;
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  const built = buildScenario(scenario);
  const plan = planSweep(built, sweepDefinition(args, numberOption(args, "duration", { positive: true })));
  const taken: number[] = [];
  function* queue(): Generator<number> {
    for (;;) {
      const j = Atomics.add(next, 0, 1);
      if (j >= order.length) return;
      taken.push(order[j]);
      yield order[j];
    }
  }
  const rows: SweepRow[] = [];
  try {
    sweepRows(built, plan, reference, queue(), new StudyTracker(hooks, plan.nItems), rows);
  } catch (e) {
    if (!isCancellation(e)) throw e;
    throw new StudyInterrupted({ items: taken.slice(0, rows.length), rows }, rows.length, plan.nItems);
  }
  const ascending = taken.map((_, j) => j).sort((a, b) => taken[a] - taken[b]);
  return {
    kind: "stepwell-sweep-part", version: 1, study: plan.study, shard, nItems: plan.nItems, items: ascending.map((j) => taken[j]),
    plan, reference: summarizeReference(reference), rows: ascending.map((j) => rows[j]),
  };
}

/**
 * The sweep in `jobs` worker threads: the reference run first, here (the one prerequisite of every row; cached as
 * usual), then the rows from a shared queue, joined by `mergeSweepParts` — exactly the one-thread result but for
 * the rows' wall times. Stopped, it throws `StudyInterrupted` with the rows every worker finished, in item order.
 */
async function parallelSweep(args: ParsedArgs, built: BuiltScenario, def: SweepDefinition, jobs: number, cache: ReferenceCache, solver: string,
  hooks: StudyHooks & { onProgress: NonNullable<StudyHooks["onProgress"]> }, ctx: CliContext): Promise<SweepResult> {
  const plan = planSweep(built, def);
  for (const w of plan.warnings) hooks.onWarning?.(w);
  const total = plan.nItems + 2;
  const stopped = (rows: SweepRow[], items: number[], ref: ReferenceRecord | null) => new StudyInterrupted<InterruptedSweep>({
    kind: "stepwell-sweep", status: "interrupted", study: plan.study, scenario: plan.scenario, nItems: plan.nItems, items, warnings: plan.warnings, plan,
    reference: ref ? summarizeReference(ref) : null, rows,
  }, rows.length, plan.nItems);
  let ref: ReferenceRecord;
  try {
    ref = referenceRun(built, plan.reference, cache, new StudyTracker(hooks, total), solver);
  } catch (e) {
    if (isCancellation(e)) throw stopped([], [], null);
    throw e;
  }
  // most steps first (the cost of a run grows with its steps); ties in item order
  const steps = (k: number) => plan.dts[k % plan.dts.length].steps;
  const order = Array.from({ length: plan.nItems }, (_, k) => k).sort((a, b) => steps(b) - steps(a) || a - b);
  const payload: SweepSlicePayload = { reference: ref, order, next: new Int32Array(new SharedArrayBuffer(4)) };
  const n = Math.min(jobs, plan.nItems);
  const tasks = Array.from({ length: n }, (_, i) => ({ module: import.meta.url, fn: "sweepSlice", shard: { index: i + 1, count: n }, payload }));
  const outcomes = await runTasks<SweepPart, { items: number[]; rows: SweepRow[] } | null>(args, tasks, ctx, (latest, item) => {
    // each worker's progress is its own rows (and the one in progress) over all rows of the study
    const rows = latest.reduce((s, p) => s + (p ? p.fraction : 0), 0);
    hooks.onProgress({ fraction: Math.min(1, (2 + plan.nItems * rows) / total), done: 2 + latest.reduce((s, p) => s + (p ? p.done : 0), 0), total, item });
  });
  const parts = outcomes.flatMap((o) => ("result" in o ? [o.result] : []));
  if (parts.length === n) return mergeSweepParts(parts);
  const byItem = new Map<number, SweepRow>();
  for (const o of outcomes) {
    const got = "result" in o ? o.result : o.interrupted;
    got?.items.forEach((k, j) => { if (j < got.rows.length) byItem.set(k, got.rows[j]); });
  }
  const items = [...byItem.keys()].sort((a, b) => a - b);
  throw stopped(items.map((k) => byItem.get(k)!), items, ref);
}

export async function sweepCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): Promise<number> {
  rejectUnknown(args, ["methods", "steppers", "dts", "dt-factors", "reference-dt", "reference-method", "duration", "error", "tolerance", "matvec-weight",
    "json", "csv", "shard", "jobs", "reference-only", "no-cache", ...LIMIT_OPTIONS], "sweep");
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  if (args.positional.length > 1) throw new SolverError("bad-input", `SCENARIO: give one scenario, got ${args.positional.length} words (${args.positional.join(" ")})`, "SCENARIO");
  const def = sweepDefinition(args, numberOption(args, "duration", { positive: true }));
  const shardText = stringOption(args, "shard");
  const shard = shardText !== undefined ? parseShard(shardText) : undefined;
  const json = stringOption(args, "json");
  const csv = stringOption(args, "csv");
  if (shard && !json) throw new SolverError("bad-input", "--json: a sharded run writes a partial result; give --json FILE (then join the parts with merge)", "--json");
  const jobs = jobsForShard(args, shard !== undefined);
  const warn = (m: string) => err(`stepwell sweep: warning: ${m}`);
  const solver = solverIdentity();
  const cache: ReferenceCache = args.options.has("no-cache") ? referenceCache : new DiskReferenceCache(cacheDirectory(), solver, warn);
  const clock = () => performance.now() / 1000;
  const built = buildScenario(scenario);
  const hooks = { clock, onProgress: progressReporter(err, clock, "sweep"), cache, solver, onWarning: warn, shouldCancel: () => ctx.stopReason() !== null };
  try {
    if (args.options.has("reference-only")) {
      const plan = planSweep(built, def);
      for (const w of plan.warnings) warn(w);
      const ref = referenceRun(built, plan.reference, cache, new StudyTracker(hooks, 2), solver);
      out(`Reference ${ref.label} at Δt = ${fmt(ref.dt, "s")} (${ref.steps} steps) ready` + (cache instanceof DiskReferenceCache ? ` in ${cache.dir}/` : "") + `; key ${ref.key}`);
      return 0;
    }
    if (shard) {
      const part = runSweep(built, def, { ...hooks, shard });
      out(`slice ${shard.index}/${shard.count}: ${part.items.length} of ${part.nItems} runs`);
      printSweep(part.rows, out);
      writeJson(json!, part);
      if (csv) writeText(csv, sweepCsv(part.rows), "--csv");
      return 0;
    }
    const result = jobs > 1 ? await parallelSweep(args, built, def, jobs, cache, solver, hooks, ctx) : runSweep(built, def, hooks);
    printSweep(result.rows, out, result);
    if (json) writeJson(json, result);
    if (csv) writeText(csv, sweepCsv(result.rows), "--csv");
    return 0;
  } catch (e) {
    return reportInterrupted(e, ctx, { command: "sweep", json, csv, what: "the reference run", print: (rows) => printSweep(rows, out), toCsv: sweepCsv }, err);
  }
}
