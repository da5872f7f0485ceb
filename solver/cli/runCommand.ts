import { execute, type RunResult } from "../driver/execute.js";
import type { Budget } from "../diagnostics/budget.js";
import { Run } from "../driver/run.js";
import { buildScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { count, fmt, loadScenarioArg, table, writeJson } from "./io.js";
import { STEPPER_CLI_OPTIONS, stepperFromArgs } from "./stepperArgs.js";
import { SolverError } from "../errors.js";
import { applyRestart, RUN_OUTPUT_OPTIONS, RunOutput } from "./runOutput.js";
import { checkRunLength, checkStepCount } from "../scenario/limits.js";
import { LIMIT_OPTIONS, LIMIT_USAGE, limitsFromArgs } from "./limitArgs.js";
import { builtinScenario } from "../scenario/builtins.js";
import { dirname } from "node:path";
import { loadedModule, userDirectory, userPath } from "./modules.js";
import type { StepperDefinition } from "../time/interface.js";
import { NEVER_STOP, STOP_EXIT_CODES, type CliContext } from "./context.js";

export const RUN_USAGE = "run SCENARIO [--method M | --stepper-module FILE] [--dt S] [--steps N | --duration S] [--linear L] [--backend B] [--tolerance T] [--substeps N] [--filter F] [--passes N] [--option key=value …] " +
  `${LIMIT_USAGE} [--json FILE] [--netcdf FILE [--every S]] [--restart FILE.nc [--restart-time T]]`;

/**
 * The stepper of a run: `--stepper-module FILE`, or a `"module"` in the scenario's stepper (relative to the
 * scenario file), loaded and registered; otherwise the scenario's or `--method`'s built-in.
 */
export function stepperForCommand(scenario: ReturnType<typeof parseScenario>, scenarioArg: string | undefined, args: ParsedArgs) {
  const moduleArg = stringOption(args, "stepper-module");
  let definition: StepperDefinition | undefined;
  let key: string | undefined;
  if (moduleArg) {
    ({ key, definition } = loadedModule(moduleArg, "--stepper-module"));
  } else if (scenario.stepper.module && !stringOption(args, "method")) {
    const base = scenarioArg && !builtinScenario(scenarioArg) ? dirname(userPath(scenarioArg)) : userDirectory();
    ({ key, definition } = loadedModule(scenario.stepper.module, "stepper.module", base));
    scenario.stepper = { ...scenario.stepper, module: key, method: definition.name };
  }
  return stepperFromArgs(scenario, args, definition, key);
}

export function runCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): number {
  rejectUnknown(args, [...STEPPER_CLI_OPTIONS, "steps", "duration", "json", "quiet", ...LIMIT_OPTIONS, ...RUN_OUTPUT_OPTIONS], "run");
  const limits = limitsFromArgs(args);
  const steps = numberOption(args, "steps", { positive: true, integer: true });
  const duration = numberOption(args, "duration", { positive: true });
  if (steps !== undefined && duration !== undefined) throw new SolverError("bad-input", "--steps: give either --steps or --duration, not both", "--steps");
  const dtGiven = args.options.has("dt");
  // the run length is checked on what will run: the scenario's own only when no option replaces it
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits, runLength: steps === undefined && duration === undefined && !dtGiven });
  const spec = stepperForCommand(scenario, args.positional[0], args);
  if (steps !== undefined) checkStepCount(steps, limits, "--steps");
  else checkRunLength(duration ?? scenario.duration, spec.dt, limits, duration !== undefined ? "--duration" : "duration", dtGiven ? "--dt" : "stepper.dt");
  const run = new Run(buildScenario(scenario), spec);
  const quiet = args.options.has("quiet");
  // --restart: continue from a stored state; --steps/--duration then count from it, and without them the run goes on to the scenario's duration
  const restart = applyRestart(args, run);
  const startStep = run.steps;
  const total = steps ?? Math.round((duration ?? (restart ? scenario.duration - run.time : scenario.duration)) / run.dt);
  if (restart && !(total >= 1)) {
    throw new SolverError("bad-input", `--restart: ${restart.file} is at t = ${restart.time} s, already at the scenario's duration ${scenario.duration} s; give --steps or --duration to run on`, "--restart");
  }
  const warnings: string[] = [];
  if (steps === undefined && !restart) {
    const asked = duration ?? scenario.duration;
    if (Math.abs(total * run.dt - asked) > 1e-9 * asked) {
      warnings.push(`${duration !== undefined ? "--duration" : "duration"}: ${asked} s is not a whole number of steps of ${run.dt} s; the run takes ${total} steps = ${total * run.dt} s`);
    }
  }
  for (const w of warnings) err(`stepwell run: warning: ${w}`);
  const output = RunOutput.open(args, run, total, restart);
  if (restart) out(`Restarted from ${restart.file} at t = ${fmt(restart.time, "s")} (step ${restart.step})${restart.note ? `; note: ${restart.note}` : ""}`);
  out(`Scenario ${scenario.name}: ${run.mesh.nCells} cells, ${run.model.params.nLayers} layers, ${run.stepper.label}, dt ${fmt(run.dt, "s")} ` +
    `(${fmt(run.dt / run.rk4DtLimit(), "", 3)} × RK4 limit ${fmt(run.rk4DtLimit(), "s")}), ${count(total, "step")} = ${count(Number(((total * run.dt) / 86400).toPrecision(3)), "day")}`);
  if (run.stepper.note) out(`Note: ${run.stepper.note}`);
  let lastPrint = -1;
  let result: RunResult;
  try {
    result = execute(run, {
      // progress after every step: a stop request (Ctrl-C, SIGTERM, closed output) is seen within one step, and
      // every output time is written as soon as it is reached
      steps: total, chunk: 1, clock: () => performance.now() / 1000,
      onProgress: ({ fraction, time, budget, step }) => {
        output?.afterSteps(step - startStep);
        const pct = Math.floor(fraction * 10);
        if (!quiet && pct !== lastPrint && budget) {
          lastPrint = pct;
          out(`  ${String(Math.round(fraction * 100)).padStart(3)}%  t = ${fmt(time / 86400, "d", 4).padEnd(10)} energy ${fmt(budget.energy * run.model.params.rho0, "J")}  ` +
            `min thickness ${fmt(budget.minThickness, "m")}  max speed ${fmt(budget.maxSpeed, "m/s")}`);
        }
        return ctx.stopReason() === null;
      },
    });
    output?.finish(); // the final state, unless it was just written
  } finally {
    output?.close();
  }
  const stop = result.status === "cancelled" ? ctx.stopReason() ?? "SIGINT" : null;
  out("");
  out(table(["quantity", "value"], [
    ["status", stop ? `interrupted (${stop}) after ${result.steps} of ${count(total, "step")}` : result.status],
    ["steps", String(result.steps)],
    ["simulated time", `${fmt(result.simulatedSeconds, "s")} (${count(Number((result.simulatedSeconds / 86400).toPrecision(3)), "day")})`],
    ["wall time", fmt(result.wallSeconds, "s", 3)],
    ["wall time per simulated day", fmt(result.simulatedSeconds > 0 ? (result.wallSeconds * 86400) / result.simulatedSeconds : NaN, "s", 3)],
    ["tendency evaluations", fmt(result.rhsEvaluations, "", 6)],
    ["matvecs (per step)", `${fmt(result.matvecs, "", 6)} (${fmt(result.matvecsPerStep, "", 3)})`],
    ["inner products", String(result.innerProducts)],
    ["φ-actions per step", fmt(result.phiActionsPerStep, "", 3)],
    ["max relative mass drift", fmt(result.mass.maxRelativeDrift, "", 3)],
    ["energy initial → final", `${fmt(result.energy.initial * run.model.params.rho0, "J")} → ${fmt(result.energy.final * run.model.params.rho0, "J")}`],
    ["max relative energy drift", result.energy.maxRelativeDrift === null ? "n/a (see below)" : fmt(result.energy.maxRelativeDrift, "", 3)],
  ]));
  if (result.energy.reason) out(`Energy drift n/a: ${result.energy.reason}.`);
  const eb = result.energyBudget;
  if (eb) {
    const rho0 = run.model.params.rho0;
    const row = (name: string, v: number) => [name, fmt(v, "", 5), fmt(v * rho0, "", 5)];
    out("");
    out(`Energy budget over ${fmt(eb.interval, "s")} (per unit reference density in m⁵ s⁻²; × ρ0 = ${rho0} kg/m³ in J):`);
    out(table(["term", "m⁵ s⁻²", "J"], [
      row("change of total energy", eb.change),
      row("wind work", eb.windWork),
      row("bottom-drag loss", eb.dragLoss),
      row("viscous loss", eb.viscousLoss),
      row("residual (made by the stepper)", eb.residual),
      ["relative residual", eb.relativeResidual === null ? "n/a" : fmt(eb.relativeResidual, "", 3), ""],
    ]));
    out(eb.relativeResidual === null ? `Relative residual n/a: ${eb.reason}.` :
      `residual = change − (wind work − drag loss − viscous loss); relative to the largest term. The budget cost ${eb.rhsEvaluations} extra tendency evaluations (${fmt(eb.wallSeconds, "s", 3)}), not counted above.`);
  }
  if (result.unstable) {
    const u = result.unstable;
    out(`\nUNSTABLE at step ${u.step}, t = ${fmt(u.time, "s")}: ${u.reason} — ${u.field} of layer ${u.layer} at ${u.field === "thickness" ? "cell" : "edge"} ${u.index} ` +
      `(x = ${fmt(u.x / 1000, "km")}, y = ${fmt(u.y / 1000, "km")}); Courant numbers barotropic ${fmt(u.courant.barotropic, "", 3)}, ` +
      `baroclinic ${fmt(u.courant.baroclinic, "", 3)}, advection ${fmt(u.courant.advection, "", 3)}. The last good state was kept.`);
  }
  if (output) out(`NetCDF output: ${output.file}, ${count(output.records, "output time")} every ${count(output.everySteps, "step")}`);
  const json = stringOption(args, "json");
  if (json) {
    writeJson(json, {
      ...result,
      ...(stop ? { status: "interrupted", interruptedBy: stop, plannedSteps: total } : {}),
      ...(restart ? { restartedFrom: { file: restart.file, time: restart.time, step: restart.step } } : {}),
      ...(output ? { netcdf: { file: output.file, outputTimes: output.records, everySteps: output.everySteps } } : {}),
      warnings,
    });
  }
  return stop ? STOP_EXIT_CODES[stop] : 0;
}
