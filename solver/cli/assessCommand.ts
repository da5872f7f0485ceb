import { buildScenario } from "../scenario/build.js";
import { builtinScenario } from "../scenario/builtins.js";
import { parseScenario } from "../scenario/schema.js";
import { ASSESS_PARTS, assess, assessOrder, assessStability, checkAssess, finishAssess, type AssessOptions } from "../studies/assess.js";
import type { StabilityResult, StepperConfig } from "../studies/stability.js";
import type { SweepResult } from "../studies/sweep.js";
import type { Shard } from "../studies/shard.js";
import type { StudyHooks } from "../studies/common.js";
import { jobsFromArgs, runTasks } from "./jobs.js";
import { SolverError } from "../errors.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { count, fmt, loadScenarioArg, table, writeJson } from "./io.js";
import { STEPPER_CLI_OPTIONS } from "./stepperArgs.js";
import { stepperForCommand } from "./runCommand.js";
import { progressReporter } from "./studyArgs.js";
import { cacheDirectory, DiskReferenceCache } from "./referenceStore.js";
import { solverIdentity } from "./solverIdentity.js";
import { NEVER_STOP, STOP_EXIT_CODES, type CliContext } from "./context.js";
import { isCancellation } from "../studies/common.js";
import { LIMIT_OPTIONS, limitsFromArgs } from "./limitArgs.js";

export const ASSESS_USAGE = "assess SCENARIO (--method M [options] | --stepper-module FILE) [--duration S] [--order-scenario NAME] [--json FILE] [--jobs N]";

/** What the command and its worker tasks read from the arguments (the same for both). */
function assessInputs(args: ParsedArgs) {
  if (!args.options.has("method") && !args.options.has("stepper-module")) {
    throw new SolverError("bad-input", "--method: give the stepper to assess with --method M or --stepper-module FILE", "--method");
  }
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  if (args.positional.length > 1) throw new SolverError("bad-input", `SCENARIO: give one scenario, got ${args.positional.length} words (${args.positional.join(" ")})`, "SCENARIO");
  const spec = stepperForCommand(scenario, args.positional[0], args);
  const { dt: _dt, ...config } = spec;
  const orderName = stringOption(args, "order-scenario") ?? "ring-wave";
  const orderRaw = builtinScenario(orderName);
  if (!orderRaw) throw new SolverError("bad-input", `--order-scenario: "${orderName}" is not a built-in scenario`, "--order-scenario");
  return {
    built: buildScenario(scenario), config: config as StepperConfig,
    orderScenario: buildScenario(parseScenario(orderRaw)), duration: numberOption(args, "duration", { positive: true }),
  };
}

function assessOptions(args: ParsedArgs, hooks: StudyHooks, solver: string, warn: (m: string) => void): AssessOptions {
  const { orderScenario, duration } = assessInputs(args);
  return { ...hooks, orderScenario, duration, solver, cache: new DiskReferenceCache(cacheDirectory(), solver, warn) };
}

/** Part 1 or 2 of the report card in a worker thread (`--jobs`): shard 1/2 is the order sweep, 2/2 the stability search. */
export function assessPart(args: ParsedArgs, shard: Shard, payload: unknown, hooks: StudyHooks): SweepResult | StabilityResult {
  const { built, config } = assessInputs(args);
  const o = assessOptions(args, hooks, payload as string, (m) => hooks.onWarning?.(m));
  return shard.index === 1 ? assessOrder(config, o, hooks.onProgress) : assessStability(built, config, o, hooks.onProgress);
}

/** The report card of one stepper: observed order, stability, conservation, cost, each with a plain verdict. */
export async function assessCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): Promise<number> {
  rejectUnknown(args, [...STEPPER_CLI_OPTIONS, "duration", "order-scenario", "json", "jobs", ...LIMIT_OPTIONS], "assess");
  const { built, config } = assessInputs(args);
  const jobs = jobsFromArgs(args);
  const clock = () => performance.now() / 1000;
  const solver = solverIdentity();
  const warn = (m: string) => err(`stepwell assess: warning: ${m}`);
  const o = assessOptions(args, { clock, onProgress: progressReporter(err, clock, "assess"), shouldCancel: () => ctx.stopReason() !== null }, solver, warn);
  let report;
  try {
    if (jobs > 1) {
      // parts 1 and 2 side by side (weights: the order sweep a quarter of the work, the stability search half),
      // then the conservation and cost runs here, alone
      checkAssess(built, config);
      const tasks = [1, 2].map((index) => ({ module: import.meta.url, fn: "assessPart", shard: { index, count: 2 }, payload: solver }));
      const outcomes = await runTasks<SweepResult | StabilityResult, unknown>(args, tasks, ctx,
        ([a, b], item) => o.onProgress?.({
          fraction: 0.25 * (a?.fraction ?? 0) + 0.5 * (b?.fraction ?? 0),
          done: [a, b].filter((p) => p !== undefined && p.fraction >= 1).length, total: ASSESS_PARTS, unit: "parts", item,
        }), warn);
      const [order, stab] = outcomes;
      if (!("result" in order) || !("result" in stab)) throw new SolverError("cancelled", "assess cancelled");
      if (ctx.stopReason() !== null) throw new SolverError("cancelled", "assess cancelled");
      report = finishAssess(built, config, o, order.result as SweepResult, stab.result as StabilityResult);
    } else report = assess(built, config, o);
  } catch (e) {
    if (!isCancellation(e)) throw e;
    const stop = ctx.stopReason() ?? "SIGINT";
    err(`stepwell assess: interrupted (${stop}); no report written`);
    return STOP_EXIT_CODES[stop];
  }
  const v = report.verdicts;
  out(`Report card: ${report.stepper.label} on ${report.scenario} (declared order ${report.stepper.declaredOrder})`);
  out(table(["question", "measured", "verdict"], [
    ["observed order", report.order.observed === null ? "n/a" : `${fmt(report.order.observed, "", 3)} on ${report.order.scenario}` +
      (report.order.range ? ` (Δt ${fmt(report.order.range[0], "s", 3)}–${fmt(report.order.range[1], "s", 3)})` : ""), v.order],
    ["largest stable Δt", `${fmt(report.stability.maxStableDt, "s")} (${fmt(report.stability.ratioToRk4, "", 3)}× RK4 limit ${fmt(report.stability.rk4DtLimit, "s")})`, v.stability],
    ["layer-volume drift", `${fmt(report.conservation.massDrift, "", 2)} over ${count(report.conservation.steps, "step")}`, v.mass],
    ["energy drift", report.conservation.energyDrift === null ? "n/a" : fmt(report.conservation.energyDrift, "", 2), v.energy],
    ["wall time per simulated day", `${fmt(report.cost.secondsPerSimDay, "s", 3)} at Δt ${fmt(report.cost.dt, "s")} (RK4 ${fmt(report.cost.rk4SecondsPerSimDay, "s", 3)})`, v.cost],
    ["work per step", `${fmt(report.cost.rhsPerStep, "", 3)} tendency evaluations, ${fmt(report.cost.matvecsPerStep, "", 3)} matvecs, ${fmt(report.cost.innerProductsPerStep, "", 3)} inner products`, ""],
  ]));
  const json = stringOption(args, "json");
  if (json) writeJson(json, report);
  return 0;
}
