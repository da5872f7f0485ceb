import { execute, type RunResult } from "../driver/execute.js";
import type { Budget } from "../diagnostics/budget.js";
import { Run } from "../driver/run.js";
import { buildScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { fmt, loadScenarioArg, table, writeJson } from "./io.js";
import { STEPPER_CLI_OPTIONS, stepperFromArgs } from "./stepperArgs.js";
import { SolverError } from "../errors.js";
import { applyRestart, chunkFor, RUN_OUTPUT_OPTIONS, RunOutput } from "./runOutput.js";

export const RUN_USAGE = "run SCENARIO [--method M] [--dt S] [--steps N | --duration S] [--linear L] [--backend B] [--tolerance T] [--substeps N] [--filter F] [--passes N] [--json FILE] " +
  "[--netcdf FILE [--every S]] [--restart FILE.nc [--restart-time T]]";

export function runCommand(args: ParsedArgs, out: (s: string) => void): number {
  rejectUnknown(args, [...STEPPER_CLI_OPTIONS, "steps", "duration", "json", "quiet", ...RUN_OUTPUT_OPTIONS], "run");
  const scenario = parseScenario(loadScenarioArg(args.positional[0]));
  const steps = numberOption(args, "steps", { positive: true, integer: true });
  const duration = numberOption(args, "duration", { positive: true });
  if (steps !== undefined && duration !== undefined) throw new SolverError("bad-input", "--steps: give either --steps or --duration, not both", "--steps");
  const spec = stepperFromArgs(scenario, args);
  const run = new Run(buildScenario(scenario), spec);
  const quiet = args.options.has("quiet");
  // --restart: continue from a stored state; --steps/--duration then count from it, and without them the run goes on to the scenario's duration
  const restart = applyRestart(args, run);
  const startStep = run.steps;
  const total = steps ?? Math.round((duration ?? (restart ? scenario.duration - run.time : scenario.duration)) / run.dt);
  if (restart && !(total >= 1)) {
    throw new SolverError("bad-input", `--restart: ${restart.file} is at t = ${restart.time} s, already at the scenario's duration ${scenario.duration} s; give --steps or --duration to run on`, "--restart");
  }
  const output = RunOutput.open(args, run, total, restart);
  if (restart) out(`Restarted from ${restart.file} at t = ${fmt(restart.time, "s")} (step ${restart.step})${restart.note ? `; note: ${restart.note}` : ""}`);
  out(`Scenario ${scenario.name}: ${run.mesh.nCells} cells, ${run.model.params.nLayers} layers, ${run.stepper.label}, dt ${fmt(run.dt, "s")} ` +
    `(${fmt(run.dt / run.rk4DtLimit(), "", 3)} × RK4 limit ${fmt(run.rk4DtLimit(), "s")}), ${total} steps = ${fmt((total * run.dt) / 86400, "days", 3)}`);
  if (run.stepper.note) out(`Note: ${run.stepper.note}`);
  let lastPrint = -1;
  const sampleSteps = Math.max(1, Math.round((scenario.outputInterval ?? scenario.duration / 24) / run.dt));
  const onProgress = ({ fraction, time, budget, step }: { fraction: number; time: number; budget?: Budget; step: number }) => {
    output?.afterSteps(step - startStep);
    const pct = Math.floor(fraction * 10);
    if (!quiet && pct !== lastPrint && budget) {
      lastPrint = pct;
      out(`  ${String(Math.round(fraction * 100)).padStart(3)}%  t = ${fmt(time / 86400, "d", 4).padEnd(10)} energy ${fmt(budget.energy * run.model.params.rho0, "J")}  ` +
        `min thickness ${fmt(budget.minThickness, "m")}  max speed ${fmt(budget.maxSpeed, "m/s")}`);
    }
  };
  let result: RunResult;
  try {
    // with --netcdf, progress chunks end on every output time and every drift sample (the steps themselves are the same)
    result = execute(run, { steps: total, clock: () => performance.now() / 1000, chunk: output ? chunkFor(output.everySteps, sampleSteps) : undefined, onProgress });
    output?.finish(); // the final state, unless it was just written
  } finally {
    output?.close();
  }
  out("");
  out(table(["quantity", "value"], [
    ["status", result.status],
    ["steps", String(result.steps)],
    ["simulated time", `${fmt(result.simulatedSeconds, "s")} (${fmt(result.simulatedSeconds / 86400, "days", 3)})`],
    ["wall time", fmt(result.wallSeconds, "s", 3)],
    ["wall time per simulated day", fmt(result.simulatedSeconds > 0 ? (result.wallSeconds * 86400) / result.simulatedSeconds : NaN, "s", 3)],
    ["tendency evaluations", fmt(result.rhsEvaluations, "", 6)],
    ["matvecs (per step)", `${result.matvecs} (${fmt(result.matvecsPerStep, "", 3)})`],
    ["inner products", String(result.innerProducts)],
    ["max relative mass drift", fmt(result.mass.maxRelativeDrift, "", 3)],
    ["energy initial → final", `${fmt(result.energy.initial * run.model.params.rho0, "J")} → ${fmt(result.energy.final * run.model.params.rho0, "J")}`],
    ["max relative energy drift", fmt(result.energy.maxRelativeDrift, "", 3)],
  ]));
  if (result.unstable) {
    const u = result.unstable;
    out(`\nUNSTABLE at step ${u.step}, t = ${fmt(u.time, "s")}: ${u.reason} — ${u.field} of layer ${u.layer} at ${u.field === "thickness" ? "cell" : "edge"} ${u.index} ` +
      `(x = ${fmt(u.x / 1000, "km")}, y = ${fmt(u.y / 1000, "km")}); Courant numbers barotropic ${fmt(u.courant.barotropic, "", 3)}, ` +
      `baroclinic ${fmt(u.courant.baroclinic, "", 3)}, advection ${fmt(u.courant.advection, "", 3)}. The last good state was kept.`);
  }
  if (output) out(`NetCDF output: ${output.file}, ${output.records} output times every ${output.everySteps} steps`);
  const json = stringOption(args, "json");
  if (json) {
    writeJson(json, {
      ...result,
      ...(restart ? { restartedFrom: { file: restart.file, time: restart.time, step: restart.step } } : {}),
      ...(output ? { netcdf: { file: output.file, outputTimes: output.records, everySteps: output.everySteps } } : {}),
    });
  }
  return 0;
}
