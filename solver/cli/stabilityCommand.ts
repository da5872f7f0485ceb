import { SolverError } from "../errors.js";
import { checkListLength } from "../scenario/limits.js";
import { LIMIT_OPTIONS, limitsFromArgs } from "./limitArgs.js";
import { buildScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { parseShard } from "../studies/shard.js";
import { runStability, type StabilityPart, type StabilityResult } from "../studies/stability.js";
import { defaultLabel, StudyInterrupted } from "../studies/common.js";
import { NEVER_STOP, STOP_EXIT_CODES, type CliContext } from "./context.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { fmt, loadScenarioArg, table, writeJson } from "./io.js";
import { progressReporter, steppersFromArgs } from "./studyArgs.js";

export const STABILITY_USAGE =
  "stability SCENARIO [--method M[,M2(key=value;…),…] | --steppers FILE] [--duration S] [--tolerance R] [--energy-growth G] " +
  "[--min-steps N] [--start-dt S] [--perturbation R] [--max-steps N] [--max-cells N] [--max-memory BYTES] [--json FILE] [--shard i/n]  (JSON: one object for one method, an array for several)";

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

export function stabilityCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): number {
  rejectUnknown(args, ["method", "methods", "steppers", "duration", "tolerance", "energy-growth", "min-steps", "start-dt", "perturbation", "json", "shard", ...LIMIT_OPTIONS], "stability");
  const limits = limitsFromArgs(args);
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits, runLength: false });
  if (args.positional.length > 1) throw new SolverError("bad-input", `SCENARIO: give one scenario, got ${args.positional.length} words (${args.positional.join(" ")})`, "SCENARIO");
  const configs = steppersFromArgs(args, scenario, ["method", "methods"]);
  checkListLength(configs.length, "studyMethods", limits, args.options.has("steppers") ? "--steppers" : args.options.has("methods") ? "--methods" : "--method");
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
  const shardText = stringOption(args, "shard");
  const shard = shardText !== undefined ? parseShard(shardText) : undefined;
  const json = stringOption(args, "json");
  if (shard && !json) throw new SolverError("bad-input", "--json: a sharded run writes a partial result; give --json FILE (then join the parts with merge)", "--json");
  const clock = () => performance.now() / 1000;
  const built = buildScenario(scenario);
  const field = args.options.has("steppers") ? "--steppers" : args.options.has("methods") ? "--methods" : "--method";
  const hooks = { clock, onProgress: progressReporter(err, clock, "stability"), field, shouldCancel: () => ctx.stopReason() !== null };
  try {
    if (shard) {
      const part = runStability(built, configs, options, { ...hooks, shard });
      out(`slice ${shard.index}/${shard.count}: ${part.items.length} of ${part.nItems} steppers`);
      printStability(part.results, out);
      writeJson(json!, part);
      return 0;
    }
    const results = runStability(built, configs, options, hooks);
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
      const results = e.partial as StabilityResult[];
      printStability(results, out);
      if (json) writeJson(json, { status: "interrupted", interruptedBy: stop, results, unfinished: configs.slice(results.length).map((c) => c.label ?? defaultLabel(c)) });
    }
    err(`stepwell stability: interrupted (${stop}) with ${e.done} of ${e.total} steppers finished${json ? `; ${json} holds those` : ""}`);
    return STOP_EXIT_CODES[stop];
  }
}
