import { existsSync } from "node:fs";
import { dirname, extname, relative, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { SolverError } from "../errors.js";
import { stepperTemplate } from "../time/template.js";
import { rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { writeText } from "./io.js";
import { userPath } from "./modules.js";

export const TEMPLATE_USAGE = "template NAME [--out FILE]";

/** Write a commented starter stepper module (TypeScript for .ts/.mts, else JavaScript); stdout without --out. */
export function templateCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void): number {
  rejectUnknown(args, ["out", "force"], "template");
  const name = args.positional[0];
  if (!name || !/^[a-z][a-z0-9-]*$/.test(name)) {
    throw new SolverError("bad-input", `NAME: give the stepper's name in lower-case letters, digits and hyphens (e.g. my-midpoint), got ${JSON.stringify(name ?? "")}`, "NAME");
  }
  const file = stringOption(args, "out");
  if (!file) {
    out(stepperTemplate(name));
    return 0;
  }
  const abs = userPath(file);
  if (existsSync(abs) && !args.options.has("force")) throw new SolverError("bad-input", `--out: ${abs} exists; choose another name or add --force`, "--out");
  const ts = [".ts", ".mts"].includes(extname(abs));
  let typesFrom: string | undefined;
  if (ts) {
    const api = resolve(dirname(fileURLToPath(import.meta.url)), "..", "api.js");
    typesFrom = relative(dirname(abs), api).replace(/\\/g, "/");
    if (!typesFrom.startsWith(".")) typesFrom = "./" + typesFrom;
  }
  writeText(abs, stepperTemplate(name, typesFrom), "--out");
  err(`wrote ${abs}; try: npm run --silent stepwell -- run ring-wave --stepper-module ${abs}`);
  return 0;
}
