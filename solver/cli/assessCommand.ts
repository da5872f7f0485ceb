import { buildScenario } from "../scenario/build.js";
import { builtinScenario } from "../scenario/builtins.js";
import { parseScenario } from "../scenario/schema.js";
import { assess } from "../studies/assess.js";
import type { StepperConfig } from "../studies/stability.js";
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

export const ASSESS_USAGE = "assess SCENARIO (--method M [options] | --stepper-module FILE) [--duration S] [--order-scenario NAME] [--json FILE]";

/** The report card of one stepper: observed order, stability, conservation, cost, each with a plain verdict. */
export function assessCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): number {
  rejectUnknown(args, [...STEPPER_CLI_OPTIONS, "duration", "order-scenario", "json", ...LIMIT_OPTIONS], "assess");
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
  const clock = () => performance.now() / 1000;
  const solver = solverIdentity();
  let report;
  try {
    report = assess(buildScenario(scenario), config as StepperConfig, {
      orderScenario: buildScenario(parseScenario(orderRaw)),
      duration: numberOption(args, "duration", { positive: true }),
      clock, onProgress: progressReporter(err, clock, "assess"), solver,
      cache: new DiskReferenceCache(cacheDirectory(), solver, (m) => err(`stepwell assess: warning: ${m}`)),
      shouldCancel: () => ctx.stopReason() !== null,
    });
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
