import { readFileSync } from "node:fs";
import { SolverError } from "../errors.js";
import { mergeStabilityParts, type StabilityPart } from "../studies/stability.js";
import { mergeSweepParts, type SweepPart } from "../studies/sweep.js";
import { rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { writeJson, writeText } from "./io.js";
import { userPath } from "./paths.js";
import { printStability, stabilityJson } from "./stabilityCommand.js";
import { printSweep, sweepCsv } from "./sweepCommand.js";
import { mergeStatisticsParts, type StatisticsPart } from "../studies/statistics.js";
import { printStatistics, statisticsCsv } from "./statisticsCommand.js";

export const MERGE_USAGE = "merge PARTS… --json FILE [--csv FILE]  (PARTS: the files of every slice of one `stability`, `sweep` or `statistics` run with --shard i/n)";

export function mergeCommand(args: ParsedArgs, out: (s: string) => void): number {
  rejectUnknown(args, ["json", "csv"], "merge");
  const json = stringOption(args, "json");
  if (!json) throw new SolverError("bad-input", "--json: give the output file (merge PARTS… --json FILE)", "--json");
  if (!args.positional.length) throw new SolverError("bad-input", "PARTS: give the partial result files written with --shard i/n", "PARTS");
  const parts = args.positional.map((path) => {
    try {
      return JSON.parse(readFileSync(userPath(path), "utf8")) as { kind?: string };
    } catch (e) {
      throw new SolverError("bad-input", `PARTS: cannot read ${path} as JSON (${(e as Error).message})`, "PARTS");
    }
  });
  const kind = parts[0]?.kind;
  if (kind === "stepwell-sweep-part") {
    const result = mergeSweepParts(parts as SweepPart[]);
    printSweep(result.rows, out, result);
    writeJson(json, result);
    const csv = stringOption(args, "csv");
    if (csv) writeText(csv, sweepCsv(result.rows), "--csv");
    return 0;
  }
  if (kind === "stepwell-statistics-part") {
    const result = mergeStatisticsParts(parts as StatisticsPart[]);
    printStatistics(result.rows, out, result);
    writeJson(json, result);
    const csv = stringOption(args, "csv");
    if (csv) writeText(csv, statisticsCsv(result.rows), "--csv");
    return 0;
  }
  if (kind === "stepwell-stability-part") {
    if (args.options.has("csv")) throw new SolverError("bad-input", "--csv: only sweeps and statistics have a CSV form", "--csv");
    const results = mergeStabilityParts(parts as StabilityPart[]);
    printStability(results, out);
    writeJson(json, stabilityJson(results));
    return 0;
  }
  throw new SolverError("bad-input", `PARTS: ${args.positional[0]} is not a partial result of stability, sweep or statistics (written with --shard i/n)`, "PARTS");
}
