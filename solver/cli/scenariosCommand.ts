import { BUILTIN_SCENARIOS } from "../scenario/builtins.js";
import { rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { writeJson } from "./io.js";

export const SCENARIOS_USAGE = "scenarios [--json FILE]";

export function scenariosCommand(args: ParsedArgs, out: (s: string) => void): number {
  rejectUnknown(args, ["json"], "scenarios");
  const list = BUILTIN_SCENARIOS.map((s) => ({ name: s.name, description: s.description }));
  for (const s of list) out(`${s.name.padEnd(20)} ${s.description}`);
  const json = stringOption(args, "json");
  if (json) writeJson(json, { scenarios: list });
  return 0;
}
