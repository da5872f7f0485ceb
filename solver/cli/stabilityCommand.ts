import { SolverError } from "../errors.js";
import { checkListLength } from "../scenario/limits.js";
import { LIMIT_OPTIONS, limitsFromArgs } from "./limitArgs.js";
import { buildScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { parseShard, shardItems, type Shard } from "../studies/shard.js";
import { checkStability, mergeStabilityParts, runStability, type StabilityPart, type StabilityResult, type StepperConfig } from "../studies/stability.js";
import { defaultLabel, StudyInterrupted, type StudyHooks, type StudyProgress } from "../studies/common.js";
import { jobsForShard, runTasks } from "./jobs.js";
import { NEVER_STOP, STOP_EXIT_CODES, type CliContext } from "./context.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { fmt, loadScenarioArg, table, writeJson } from "./io.js";
import { progressReporter, steppersFromArgs } from "./studyArgs.js";

export const STABILITY_USAGE =
  "stability SCENARIO [--method M[,M2(key=value;…),…] | --steppers FILE] [--duration S] [--tolerance R] [--energy-growth G] " +
  "[--min-steps N] [--start-dt S] [--perturbation R] [--max-steps N] [--max-cells N] [--max-memory BYTES] [--json FILE] [--shard i/n] [--jobs N]  (JSON: one object for one method, an array for several)";

/** The JSON of a finished study: one object for one stepper, an array in the given order for several. */
export function stabilityJson(results: StabilityResult[]): StabilityResult | StabilityResult[] {
  return results.length === 1 ? results[0] : results;
}

export function printStability(results: StabilityResult[], out: (s: string) => void): void {
  out(table(["stepper", "max stable Δt", "× RK4 limit", "trials", "note"], results.map((r) => [
    r.label, fmt(r.maxStableDt, "s"), fmt(r.ratioToRk4, "", 4), String(r.trials.length),
    r.bracketed ? `±${fmt(r.tolerance * 100, "", 2)}%` : r.maxStableDt > 0 ? "no unstable Δt found: the limit is at least this" : "no stable Δt found",
  ])));
  if (results.length) out(`RK4 gravity-wave limit 2√2/ω_max = ${fmt(results[0].rk4DtLimit, "s")}; each trial ran ${fmt(results[0].duration, "s")} (at least the minimum steps).`);
}

/** What the command and its worker slices read from the arguments (the same for both). */
function stabilityInputs(args: ParsedArgs) {
  const limits = limitsFromArgs(args);
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits, runLength: false });
  if (args.positional.length > 1) throw new SolverError("bad-input", `SCENARIO: give one scenario, got ${args.positional.length} words (${args.positional.join(" ")})`, "SCENARIO");
  const configs = steppersFromArgs(args, scenario, ["method", "methods"]);
  const field = args.options.has("steppers") ? "--steppers" : args.options.has("methods") ? "--methods" : "--method";
  checkListLength(configs.length, "studyMethods", limits, field);
  const options = {
    duration: numberOption(args, "duration", { positive: true }),
    tolerance: numberOption(args, "tolerance"),
    energyGrowth: numberOption(args, "energy-growth"),
    minSteps: numberOption(args, "min-steps", { positive: true, integer: true }),
    startDt: numberOption(args, "start-dt", { positive: true }),
    perturbation: numberOption(args, "perturbation"),
    maxSteps: limits.steps,
  };
  if (options.tolerance !== undefined && !(options.tolerance > 0)) throw new SolverError("bad-input", `--tolerance: must be > 0 (relative width of the final bracket), got ${options.tolerance}`, "--tolerance");
  return { built: buildScenario(scenario), configs, options, field };
}

/** One slice of the steppers in a worker thread (`--jobs`). */
export function stabilitySlice(args: ParsedArgs, shard: Shard, _payload: unknown, hooks: StudyHooks): StabilityPart {
  const { built, configs, options, field } = stabilityInputs(args);
  return runStability(built, configs, options, { ...hooks, field, shard });
}

/**
 * The stability study in `jobs` worker threads: slice i of n (every n-th stepper) in worker i, joined by
 * `mergeStabilityParts` — exactly the one-thread result. Stopped, it throws `StudyInterrupted` with the
 * searches every worker finished, in the order the steppers were given.
 */
async function parallelStability(args: ParsedArgs, configs: readonly StepperConfig[], jobs: number,
  onProgress: (p: StudyProgress) => void, ctx: CliContext): Promise<StabilityResult[]> {
  const n = Math.min(jobs, configs.length);
  const tasks = Array.from({ length: n }, (_, i) => {
    const shard = { index: i + 1, count: n };
    return { module: import.meta.url, fn: "stabilitySlice", shard };
  });
  const sizes = tasks.map((t) => shardItems(configs.length, t.shard).length);
  const outcomes = await runTasks<StabilityPart, StabilityPart | null>(args, tasks, ctx, (latest, item) => {
    // a worker's fraction is of its own steppers; the searches done are counted whole
    const done = latest.reduce((s, p, i) => s + (p ? p.fraction * sizes[i] : 0), 0);
    onProgress({ fraction: done / configs.length, done: latest.reduce((s, p, i) => s + (p ? Math.floor(p.fraction * sizes[i] + 1e-9) : 0), 0), total: configs.length, item });
  });
  const parts = outcomes.flatMap((o) => ("result" in o ? [o.result] : []));
  if (parts.length === n) return mergeStabilityParts(parts);
  const byItem = new Map<number, StabilityResult>();
  for (const o of outcomes) {
    const got = "result" in o ? o.result : o.interrupted;
    got?.items.forEach((k, j) => { if (j < got.results.length) byItem.set(k, got.results[j]); });
  }
  const items = [...byItem.keys()].sort((a, b) => a - b);
  throw new StudyInterrupted<{ results: StabilityResult[]; items: number[] }>({ results: items.map((k) => byItem.get(k)!), items }, items.length, configs.length);
}

export async function stabilityCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): Promise<number> {
  rejectUnknown(args, ["method", "methods", "steppers", "duration", "tolerance", "energy-growth", "min-steps", "start-dt", "perturbation", "json", "shard", "jobs", ...LIMIT_OPTIONS], "stability");
  const { built, configs, options, field } = stabilityInputs(args);
  const shardText = stringOption(args, "shard");
  const shard = shardText !== undefined ? parseShard(shardText) : undefined;
  const json = stringOption(args, "json");
  if (shard && !json) throw new SolverError("bad-input", "--json: a sharded run writes a partial result; give --json FILE (then join the parts with merge)", "--json");
  const jobs = jobsForShard(args, shard !== undefined);
  const clock = () => performance.now() / 1000;
  const hooks = { clock, onProgress: progressReporter(err, clock, "stability"), field, shouldCancel: () => ctx.stopReason() !== null };
  try {
    if (shard) {
      const part = runStability(built, configs, options, { ...hooks, shard });
      out(`slice ${shard.index}/${shard.count}: ${part.items.length} of ${part.nItems} steppers`);
      printStability(part.results, out);
      writeJson(json!, part);
      return 0;
    }
    let results: StabilityResult[];
    if (jobs > 1 && configs.length > 1) {
      checkStability(built, configs, options, field);
      results = await parallelStability(args, configs, jobs, hooks.onProgress, ctx);
    } else results = runStability(built, configs, options, hooks);
    printStability(results, out);
    if (json) writeJson(json, stabilityJson(results));
    return 0;
  } catch (e) {
    if (!(e instanceof StudyInterrupted)) throw e;
    // stopped: write the searches that finished, marked interrupted (an unfinished search's bracket is not a result)
    const stop = ctx.stopReason() ?? "SIGINT";
    if (shard) {
      const part = e.partial as StabilityPart;
      printStability(part.results, out);
      writeJson(json!, { ...part, interruptedBy: stop });
    } else {
      // one thread finishes the steppers in order; worker threads each finish some of theirs
      const p = e.partial as StabilityResult[] | { results: StabilityResult[]; items: number[] };
      const results = Array.isArray(p) ? p : p.results;
      const finished = new Set(Array.isArray(p) ? p.map((_, k) => k) : p.items);
      printStability(results, out);
      if (json) writeJson(json, { status: "interrupted", interruptedBy: stop, results, unfinished: configs.filter((_, k) => !finished.has(k)).map((c) => c.label ?? defaultLabel(c)) });
    }
    err(`stepwell stability: interrupted (${stop}) with ${e.done} of ${e.total} steppers finished${json ? `; ${json} holds those` : ""}`);
    return STOP_EXIT_CODES[stop];
  }
}
