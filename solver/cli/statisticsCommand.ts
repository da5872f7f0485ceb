import { SolverError } from "../errors.js";
import { checkListLength } from "../scenario/limits.js";
import { buildScenario, type BuiltScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { MemoryReferenceCache, referenceCache, type ReferenceCache, type ReferenceRecord } from "../studies/reference.js";
import { parseShard, type Shard } from "../studies/shard.js";
import {
  cachedMember, computeMember, finishStatistics, noiseFloor, packStatistics, planStatistics, referenceMembers, runStatistics, STATISTICS,
  statisticsRows, summarizeStatisticsReference, unpackStatistics,
  type InterruptedStatistics, type MemberWork, type StatisticFields, type StatisticsDefinition, type StatisticsPlan, type StatisticsReferenceSummary,
  type StatisticsResult, type StatisticsRow, type WindowEnergy,
} from "../studies/statistics.js";
import { isCancellation, StudyInterrupted, StudyTracker, type StudyHooks, type StudyProgress } from "../studies/common.js";
import { jobsForShard, runTasks } from "./jobs.js";
import { statisticsFile, type StatisticsFileInfo, type StatisticsRecord } from "../io/statisticsOutput.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { NEVER_STOP, type CliContext } from "./context.js";
import { fmt, loadScenarioArg, table, writeFileAtomic, writeJson, writeText } from "./io.js";
import { LIMIT_OPTIONS, LIMIT_USAGE, limitsFromArgs } from "./limitArgs.js";
import { userPath } from "./paths.js";
import { cacheDirectory, DiskReferenceCache } from "./referenceStore.js";
import { stepwellVersion } from "./runOutput.js";
import { solverIdentity } from "./solverIdentity.js";
import { numberList, parseMethodList, progressReporter, reportInterrupted, steppersFromArgs } from "./studyArgs.js";

export const STATISTICS_USAGE =
  "statistics SCENARIO (--methods LIST | --steppers FILE) (--dts d1,d2,… | --dt-factors f1,f2,…) --spin-up S --window S [--sample-every S] " +
  "[--reference-dt S] [--reference-method M] [--ensemble N] [--seed N] [--json FILE] [--csv FILE] [--netcdf FILE] [--shard i/n] [--jobs N] [--no-cache] " + LIMIT_USAGE;

const SHORT: Record<string, string> = {
  meanSurface: "mean η", surfaceStd: "std η", meanThickness: "mean h", meanKineticEnergy: "mean KE",
  meanEnergy: "mean E", meanWindPower: "wind", meanDragLoss: "drag", meanViscousLoss: "viscous", meanResidual: "residual",
};

export function statisticsCsv(rows: StatisticsRow[]): string {
  const q = (s: string) => (/[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
  const n = (v: number | null) => (v === null || !Number.isFinite(v) ? "" : String(v));
  const b = (v: boolean | null) => (v === null ? "" : String(v));
  const cap = (s: string) => s[0].toUpperCase() + s.slice(1);
  const header = ["label", "method", "dt", "dtRatioToRk4", "status", ...STATISTICS.map((s) => `error${cap(s)}`), ...STATISTICS.map((s) => `within${cap(s)}`),
    "wallSeconds", "rhsEvaluations", "matvecs"];
  return [header.join(","), ...rows.map((r) => [q(r.label), q(r.method), n(r.dt), n(r.dtRatioToRk4), r.status, ...STATISTICS.map((s) => n(r.errors[s])),
    ...STATISTICS.map((s) => b(r.withinNoise[s])), n(r.wallSeconds), n(r.rhsEvaluations), n(r.matvecs)].join(","))].join("\n") + "\n";
}

export function printStatistics(rows: StatisticsRow[], out: (s: string) => void, result?: Pick<StatisticsResult, "reference" | "noiseFloor" | "spinUp" | "window" | "samples" | "sampleEvery">): void {
  const e = (r: StatisticsRow, s: (typeof STATISTICS)[number]) => {
    const v = r.errors[s];
    if (v === null) return "—";
    return fmt(v, "", 3) + (r.withinNoise[s] === true ? " ✓" : r.withinNoise[s] === false ? " ✗" : "");
  };
  if (result) {
    const ref = result.reference;
    out(`Spin-up ${fmt(result.spinUp / 86400, "days")}, window ${fmt(result.window / 86400, "days")} (${result.samples} samples every ${fmt(result.sampleEvery, "s")}); ` +
      `reference ${ref.label} at Δt = ${fmt(ref.dt, "s")}, ensemble of ${ref.ensemble}.`);
    out(ref.ensemble > 1
      ? `Noise floor (largest difference between two members): ${STATISTICS.map((s) => `${SHORT[s]} ${fmt(result.noiseFloor[s] ?? NaN, "", 2)}`).join(", ")}`
      : "No noise floor (an ensemble of 1); give --ensemble N ≥ 2 to tell errors from chaos.");
  }
  out(table(["stepper", "Δt", "× RK4", "status", ...STATISTICS.map((s) => `err ${SHORT[s]}`), "wall"],
    rows.map((r) => [r.label, fmt(r.dt, "s"), fmt(r.dtRatioToRk4, "", 3), r.status, ...STATISTICS.map((s) => e(r, s)), fmt(r.wallSeconds, "s", 3)])));
  if (rows.some((r) => Object.values(r.withinNoise).some((v) => v !== null))) out("✓: within the noise floor of the reference ensemble; ✗: above it.");
}

export function statisticsDefinition(args: ParsedArgs): StatisticsDefinition {
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
  const spinUp = numberOption(args, "spin-up");
  if (spinUp === undefined) throw new SolverError("bad-input", "--spin-up: give the spin-up time in seconds before the window (0 for none)", "--spin-up");
  if (!(spinUp >= 0)) throw new SolverError("bad-input", `--spin-up: must be ≥ 0 s, got ${spinUp}`, "--spin-up");
  const window = numberOption(args, "window");
  if (window === undefined) throw new SolverError("bad-input", "--window: give the length of the averaging window in seconds", "--window");
  if (!(window > 0)) throw new SolverError("bad-input", `--window: must be > 0 s, got ${window}`, "--window");
  const ensemble = numberOption(args, "ensemble", { positive: true, integer: true });
  if (ensemble !== undefined) checkListLength(ensemble, "ensemble", limits, "--ensemble");
  const refMethod = stringOption(args, "reference-method");
  let referenceSpec;
  if (refMethod !== undefined) {
    const list = parseMethodList(refMethod, "--reference-method");
    if (list.length !== 1) throw new SolverError("bad-input", "--reference-method: give one method", "--reference-method");
    referenceSpec = list[0];
  }
  return {
    limits, steppers, field, dts, dtFactors, spinUp, window, sampleEvery: numberOption(args, "sample-every", { positive: true }),
    referenceSpec, referenceDt: numberOption(args, "reference-dt", { positive: true }), ensemble,
    seed: numberOption(args, "seed", { integer: true }),
  };
}

/**
 * `--netcdf FILE`: the reference's and every completed row's statistic fields, one record each (see
 * solver/io/statisticsOutput.ts). Collected through the study's `onFields` hook, written once at the end.
 */
export class StatisticsNetcdf {
  readonly records: StatisticsRecord[] = [];
  constructor(readonly path: string, readonly built: BuiltScenario) {}
  /** The study's `onFields` hook: the reference (row null) comes first, then each completed row. */
  add = (row: { label: string; dt: number } | null, fields: StatisticFields, energy: WindowEnergy): void => {
    this.records.push({ label: row ? row.label : "reference", dt: row ? row.dt : NaN, fields, energy });
  };
  write(info: StatisticsFileInfo, reference: { label: string; dt: number }): void {
    const r = this.records[0];
    if (r && Number.isNaN(r.dt)) this.records[0] = { ...r, label: `reference ${reference.label}`, dt: reference.dt };
    const target = userPath(this.path);
    try {
      writeFileAtomic(target, statisticsFile(this.built, info, this.records));
    } catch (e) {
      if (e instanceof SolverError) throw e;
      throw new SolverError("bad-input", `--netcdf: cannot write ${target} (${(e as Error).message})`, "--netcdf");
    }
  }
}

/** The scenario, definition and plan of a statistics command line (what every worker rebuilds from the same arguments). */
function statisticsInputs(args: ParsedArgs): { built: BuiltScenario; def: StatisticsDefinition; plan: StatisticsPlan } {
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  const built = buildScenario(scenario);
  const def = statisticsDefinition(args);
  return { built, def, plan: planStatistics(built, def) };
}

/** A shared queue of work items: `order` read in turn through the shared position `next[0]`. */
interface Queue { order: number[]; next: Int32Array }
function* take(q: Queue, taken: number[]): Generator<number> {
  for (;;) {
    const j = Atomics.add(q.next, 0, 1);
    if (j >= q.order.length) return;
    taken.push(q.order[j]);
    yield q.order[j];
  }
}

/** One worker's share of the reference ensemble (`--jobs`): members from the shared queue, as cache records. */
export function statisticsMemberSlice(args: ParsedArgs, _shard: Shard, payload: unknown, hooks: StudyHooks): ReferenceRecord[] {
  const { queue, solver } = payload as { queue: Queue; solver: string };
  const { built, plan } = statisticsInputs(args);
  const tracker = new StudyTracker(hooks, queue.order.length);
  const work: MemberWork = { run: null, acc: null };
  const records: ReferenceRecord[] = [];
  for (const m of take(queue, [])) {
    records.push(computeMember(built, plan, m, tracker, solver, work));
    tracker.done++;
  }
  return records;
}

interface RowSlicePayload { queue: Queue; solver: string; members: ReferenceRecord[]; fields: boolean }
interface RowSliceResult { items: number[]; rows: StatisticsRow[]; fields: (Float64Array | null)[] }

/**
 * One worker's share of the rows (`--jobs`): the members handed over (computed once, before), then the runs from
 * the shared queue with `statisticsRows`, as the one-thread study runs them; with `fields`, each row's packed
 * time-mean fields too (for `--netcdf`).
 */
export function statisticsRowSlice(args: ParsedArgs, _shard: Shard, payload: unknown, hooks: StudyHooks): RowSliceResult {
  const { queue, solver, members: records, fields: wantFields } = payload as RowSlicePayload;
  const { built, plan } = statisticsInputs(args);
  const cache = new MemoryReferenceCache();
  for (const r of records) cache.set(r.key, r);
  const members = referenceMembers(built, plan, cache, new StudyTracker({}, plan.ensemble.members), solver);
  const floor = noiseFloor(built.model, members);
  const taken: number[] = [];
  const rows: StatisticsRow[] = [];
  const fields: (Float64Array | null)[] = [];
  // the fields hook runs just before its row is added: its index is the number of rows so far
  const onFields = wantFields ? (_: unknown, f: StatisticFields, e: WindowEnergy) => { fields[rows.length] = packStatistics(f, e); } : undefined;
  try {
    statisticsRows(built, plan, members[0], floor.max, take(queue, taken), new StudyTracker(hooks, plan.nItems), rows, onFields);
  } catch (e) {
    if (!isCancellation(e)) throw e;
    throw new StudyInterrupted<RowSliceResult>({ items: taken.slice(0, rows.length), rows, fields }, rows.length, plan.nItems);
  }
  return { items: taken, rows, fields };
}

/**
 * The statistics study in `jobs` worker threads: the ensemble members not in the cache first, side by side (each
 * member is an independent run; stored in the cache as the one-thread study stores them), then the rows from a shared
 * queue, most steps first — exactly the one-thread result but for the rows' wall times. Stopped, it throws
 * `StudyInterrupted` with the rows every worker finished, in item order.
 */
async function parallelStatistics(args: ParsedArgs, built: BuiltScenario, def: StatisticsDefinition, jobs: number, cache: ReferenceCache, solver: string,
  hooks: StudyHooks & { onProgress: NonNullable<StudyHooks["onProgress"]> }, ctx: CliContext, nc: StatisticsNetcdf | null): Promise<StatisticsResult> {
  const plan = planStatistics(built, def);
  for (const w of plan.warnings) hooks.onWarning?.(w);
  const nMembers = plan.ensemble.members;
  const total = plan.nItems + nMembers;
  let reference: StatisticsReferenceSummary | null = null;
  const stopped = (rows: StatisticsRow[], items: number[]) => new StudyInterrupted<InterruptedStatistics>({
    kind: "stepwell-statistics", status: "interrupted", study: plan.study, scenario: plan.scenario, nItems: plan.nItems, items, warnings: plan.warnings, plan,
    reference, rows,
  }, rows.length, plan.nItems);
  const progress = (base: number, weight: number) => (latest: readonly (StudyProgress | undefined)[], item: string) => {
    const f = latest.reduce((s, p) => s + (p ? p.fraction : 0), 0);
    hooks.onProgress({ fraction: Math.min(1, (base + weight * f) / total), done: base + latest.reduce((s, p) => s + (p ? p.done : 0), 0), total, item });
  };
  const queue = (order: number[]): Queue => ({ order, next: new Int32Array(new SharedArrayBuffer(4)) });
  // 1. the members the cache does not hold
  const missing = Array.from({ length: nMembers }, (_, m) => m).filter((m) => !cachedMember(built, plan, cache, m, solver));
  if (missing.length > 0) {
    const n = Math.min(jobs, missing.length);
    const payload = { queue: queue(missing), solver };
    const tasks = Array.from({ length: n }, (_, i) => ({ module: import.meta.url, fn: "statisticsMemberSlice", shard: { index: i + 1, count: n }, payload }));
    const outcomes = await runTasks<ReferenceRecord[], null>(args, tasks, ctx, progress(nMembers - missing.length, missing.length), hooks.onWarning);
    for (const o of outcomes) if ("result" in o) for (const r of o.result) cache.set(r.key, r);
    if (outcomes.some((o) => !("result" in o))) throw stopped([], []);
  }
  const members = referenceMembers(built, plan, cache, new StudyTracker({}, nMembers), solver);
  reference = summarizeStatisticsReference(built, plan, members);
  const floor = noiseFloor(built.model, members);
  nc?.add(null, members[0].fields, members[0].energy);
  // 2. the rows, most steps first (the cost of a run grows with its steps); ties in item order
  const steps = (k: number) => plan.dts[k % plan.dts.length].steps;
  const order = Array.from({ length: plan.nItems }, (_, k) => k).sort((a, b) => steps(b) - steps(a) || a - b);
  const records = members.map((m) => {
    const r = cache.get(m.key);
    if (!r) throw new SolverError("bad-input", `--ensemble: member ${m.key} vanished from the reference cache`, "--ensemble");
    return r;
  });
  const payload: RowSlicePayload = { queue: queue(order), solver, members: records, fields: nc !== null };
  const n = Math.min(jobs, plan.nItems);
  const tasks = Array.from({ length: n }, (_, i) => ({ module: import.meta.url, fn: "statisticsRowSlice", shard: { index: i + 1, count: n }, payload }));
  const outcomes = await runTasks<RowSliceResult, RowSliceResult | null>(args, tasks, ctx, progress(nMembers, 1), hooks.onWarning);
  const byItem = new Map<number, { row: StatisticsRow; fields: Float64Array | null }>();
  for (const o of outcomes) {
    const got = "result" in o ? o.result : o.interrupted;
    got?.items.forEach((k, j) => { if (j < got.rows.length) byItem.set(k, { row: got.rows[j], fields: got.fields[j] ?? null }); });
  }
  const items = [...byItem.keys()].sort((a, b) => a - b);
  const { nCells, nLayers } = built.model.layout;
  for (const k of items) {
    const got = byItem.get(k)!;
    if (got.fields) { const u = unpackStatistics(got.fields, nCells, nLayers); nc?.add({ label: got.row.label, dt: got.row.dt }, u.fields, u.energy); }
  }
  const rows = items.map((k) => byItem.get(k)!.row);
  if (items.length < plan.nItems) throw stopped(rows, items);
  return finishStatistics(plan, reference, floor, rows);
}

export async function statisticsCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): Promise<number> {
  rejectUnknown(args, ["methods", "steppers", "dts", "dt-factors", "spin-up", "window", "sample-every", "reference-dt", "reference-method", "ensemble", "seed",
    "json", "csv", "netcdf", "shard", "jobs", "no-cache", ...LIMIT_OPTIONS], "statistics");
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  if (args.positional.length > 1) throw new SolverError("bad-input", `SCENARIO: give one scenario, got ${args.positional.length} words (${args.positional.join(" ")})`, "SCENARIO");
  const def = statisticsDefinition(args);
  const shardText = stringOption(args, "shard");
  const shard = shardText !== undefined ? parseShard(shardText) : undefined;
  const json = stringOption(args, "json");
  const csv = stringOption(args, "csv");
  const netcdfPath = stringOption(args, "netcdf");
  if (shard && !json) throw new SolverError("bad-input", "--json: a sharded run writes a partial result; give --json FILE (then join the parts with merge)", "--json");
  const jobs = jobsForShard(args, shard !== undefined);
  const warn = (m: string) => err(`stepwell statistics: warning: ${m}`);
  const solver = solverIdentity();
  const cache: ReferenceCache = args.options.has("no-cache") ? referenceCache : new DiskReferenceCache(cacheDirectory(), solver, warn);
  const clock = () => performance.now() / 1000;
  const built = buildScenario(scenario);
  const nc = netcdfPath ? new StatisticsNetcdf(netcdfPath, built) : null;
  const hooks = {
    clock, onProgress: progressReporter(err, clock, "statistics"), cache, solver, onWarning: warn, shouldCancel: () => ctx.stopReason() !== null,
    ...(nc ? { onFields: nc.add } : {}),
  };
  const writeNetcdf = (r: { spinUp: number; window: number; sampleEvery: number; samples: number; reference: { label: string; dt: number; ensemble: number } }) => {
    nc?.write({ version: stepwellVersion(), spinUp: r.spinUp, window: r.window, sampleEvery: r.sampleEvery, samples: r.samples, ensemble: r.reference.ensemble }, r.reference);
  };
  try {
    if (shard) {
      const part = runStatistics(built, def, { ...hooks, shard });
      out(`slice ${shard.index}/${shard.count}: ${part.items.length} of ${part.nItems} runs`);
      printStatistics(part.rows, out);
      writeJson(json!, part);
      if (csv) writeText(csv, statisticsCsv(part.rows), "--csv");
      writeNetcdf({ ...part.plan, reference: part.reference });
      return 0;
    }
    const result = jobs > 1 ? await parallelStatistics(args, built, def, jobs, cache, solver, hooks, ctx, nc) : runStatistics(built, def, hooks);
    printStatistics(result.rows, out, result);
    if (json) writeJson(json, result);
    if (csv) writeText(csv, statisticsCsv(result.rows), "--csv");
    writeNetcdf(result);
    return 0;
  } catch (e) {
    return reportInterrupted(e, ctx, { command: "statistics", json, csv, what: "the reference runs", print: (rows) => printStatistics(rows, out), toCsv: statisticsCsv }, err);
  }
}

