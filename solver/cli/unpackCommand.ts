import { existsSync, mkdirSync, readFileSync, statSync } from "node:fs";
import { basename, dirname, extname, join, relative } from "node:path";
import { SolverError } from "../errors.js";
import { asStepperCode, isEditorModule } from "../scenario/stepperCode.js";
import { rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { writeText } from "./io.js";
import { userPath } from "./modules.js";

export const UNPACK_USAGE = "unpack FILE.json [--out DIR] [--force]";

/**
 * A scenario exported by the sandbox with its code panel's stepper (`stepperCode`, stepper module "editor:<name>")
 * → two files the command line runs: the module `<name>.ts` (or `.js`) and `<file>-unpacked.json`, whose stepper
 * names that module. Nothing of the code is run here.
 */
export function unpackCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void): number {
  rejectUnknown(args, ["out", "force"], "unpack");
  const file = args.positional[0];
  if (!file) throw new SolverError("bad-input", "FILE: give the scenario file exported by the sandbox (a .json with stepperCode)", "FILE");
  const abs = userPath(file);
  if (!existsSync(abs) || !statSync(abs).isFile()) throw new SolverError("bad-input", `FILE: ${abs} not found`, "FILE");
  let raw: unknown;
  try {
    raw = JSON.parse(readFileSync(abs, "utf8"));
  } catch (e) {
    throw new SolverError("bad-input", `FILE: ${abs} is not JSON (${(e as Error).message})`, "FILE");
  }
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) throw new SolverError("bad-input", `FILE: ${abs} is not a scenario object`, "FILE");
  const { stepperCode, ...scenario } = raw as Record<string, unknown>;
  if (stepperCode === undefined) throw new SolverError("bad-input", `stepperCode: ${abs} carries no stepper code; run it as it is`, "stepperCode");
  const code = asStepperCode(stepperCode);
  if (!code) throw new SolverError("bad-input", "stepperCode: expected { name, language, source } with a source text of at most 200,000 characters", "stepperCode");
  const dir = userPath(stringOption(args, "out") ?? dirname(abs));
  try {
    mkdirSync(dir, { recursive: true });
  } catch (e) {
    throw new SolverError("bad-input", `--out: cannot create ${dir} (${(e as Error).message})`, "--out");
  }
  const moduleFile = join(dir, `${code.name}.${code.language}`);
  const scenarioFile = join(dir, `${basename(abs, extname(abs))}-unpacked.json`);
  for (const f of [moduleFile, scenarioFile]) {
    if (existsSync(f) && !args.options.has("force")) throw new SolverError("bad-input", `--out: ${f} exists; choose another directory or add --force`, "--out");
  }
  const stepper = { ...((scenario.stepper ?? {}) as Record<string, unknown>) };
  if (isEditorModule(stepper) || stepper.module === undefined) {
    delete stepper.method;
    stepper.module = `./${relative(dir, moduleFile).replace(/\\/g, "/")}`;
  }
  writeText(moduleFile, code.source.endsWith("\n") ? code.source : code.source + "\n", "--out");
  writeText(scenarioFile, JSON.stringify({ ...scenario, stepper }, null, 2) + "\n", "--out");
  err(`wrote ${moduleFile} and ${scenarioFile}; nothing of the code has run. Read it, then: stepwell run ${scenarioFile}`);
  out(scenarioFile);
  return 0;
}
