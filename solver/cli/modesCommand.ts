import { Run } from "../driver/run.js";
import { LIMIT_OPTIONS, limitsFromArgs } from "./limitArgs.js";
import { buildScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { fmt, loadScenarioArg, table, writeJson } from "./io.js";

export const MODES_USAGE = `modes SCENARIO [--max-cells N] [--max-memory BYTES] [--json FILE]`;

export function modesCommand(args: ParsedArgs, out: (s: string) => void): number {
  rejectUnknown(args, ["json", ...LIMIT_OPTIONS], "modes");
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  const run = new Run(buildScenario(scenario));
  const d = run.describe();
  out(`Vertical modes of ${scenario.name} (${d.nLayers} layers, mesh spacing ${fmt(d.spacing / 1000, "km")}):`);
  out(table(["mode", "speed", "Rossby radius", "equivalent depth"], d.modes.map((m) => [
    m.index === 0 ? "0 (barotropic)" : String(m.index), fmt(m.speed, "m/s"),
    Number.isFinite(m.rossbyRadius) ? fmt(m.rossbyRadius / 1000, "km") : "∞ (f0 = 0)", fmt((m.speed * m.speed) / scenario.physics.gravity, "m"),
  ])));
  out(`RK4 gravity-wave time-step limit: ${fmt(d.rk4DtLimit, "s")} (2√2 / ω_max, ω_max = √6 c0 / d)`);
  const json = stringOption(args, "json");
  if (json) writeJson(json, { scenario: scenario.name, modes: d.modes, rk4DtLimit: d.rk4DtLimit });
  return 0;
}
