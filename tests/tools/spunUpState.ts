/**
 * Writes a spun-up state of a built-in scenario to public/ (default: eddying-jets after 20 simulated days with its
 * own stepper), for the sandbox to open instead of the scenario's initial state. The file format is documented
 * in solver/io/stateFile.ts ("stepwell-state-1": JSON with float32 fields in base64, about 80 kB here).
 *
 *   npx tsx tests/tools/spunUpState.ts [--scenario NAME] [--days D] [--out FILE]
 *
 * Bounds: at most 365 simulated days and the declared step limit, checked before any step is taken.
 */
import { parseArgs } from "node:util";
import { mkdirSync, writeFileSync } from "node:fs";
import { dirname, resolve } from "node:path";
import { Run } from "../../solver/driver/run";
import { SolverError } from "../../solver/errors";
import { encodeState } from "../../solver/io/stateFile";
import { buildScenario } from "../../solver/scenario/build";
import { builtinScenario } from "../../solver/scenario/builtins";
import { checkRunLength, LIMITS } from "../../solver/scenario/limits";
import { parseScenario } from "../../solver/scenario/schema";

const MAX_DAYS = 365;

function main(): number {
  const { values } = parseArgs({ options: { scenario: { type: "string", default: "eddying-jets" }, days: { type: "string", default: "20" }, out: { type: "string" } } });
  const name = values.scenario!;
  const raw = builtinScenario(name);
  if (!raw) throw new SolverError("bad-input", `--scenario: "${name}" is not a built-in scenario`, "--scenario");
  const days = Number(values.days);
  if (!(days > 0 && days <= MAX_DAYS)) throw new SolverError("bad-input", `--days: must be in (0, ${MAX_DAYS}], got ${values.days}`, "--days");
  const scenario = parseScenario(raw, "", { runLength: false });
  const built = buildScenario(scenario);
  const run = new Run(built);
  const steps = Math.round((days * 86400) / run.dt);
  checkRunLength(steps * run.dt, run.dt, LIMITS, "--days", "stepper.dt");
  const out = resolve(values.out ?? `public/states/${name}-day${days}.json`);
  const t0 = performance.now();
  const chunk = Math.max(1, Math.round(86400 / run.dt));
  while (run.steps < steps) {
    if (!run.advance(Math.min(chunk, steps - run.steps))) throw new Error(`${name} became unstable at step ${run.unstable!.step}: ${run.unstable!.reason}`);
    process.stderr.write(`\rday ${(run.time / 86400).toFixed(1)} of ${days}, ${((performance.now() - t0) / 1000).toFixed(0)} s`);
  }
  process.stderr.write("\n");
  const file = encodeState(built.model, run.state, { scenario: name, time: run.time, step: run.steps, method: run.spec.method, dt: run.dt });
  mkdirSync(dirname(out), { recursive: true });
  const text = JSON.stringify(file) + "\n";
  writeFileSync(out, text);
  process.stdout.write(`${out}: ${name} at day ${days} (${run.steps} steps of ${run.dt} s, ${run.spec.method}), ${text.length} bytes\n`);
  return 0;
}

try {
  process.exitCode = main();
} catch (e) {
  if (e instanceof SolverError) { process.stderr.write(`spunUpState: ${e.message}\n`); process.exitCode = 2; } else throw e;
}
