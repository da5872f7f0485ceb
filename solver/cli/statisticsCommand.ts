import { SolverError } from "../errors.js";
import { checkListLength } from "../scenario/limits.js";
import { buildScenario, type BuiltScenario } from "../scenario/build.js";
import { parseScenario } from "../scenario/schema.js";
import { referenceCache, type ReferenceCache } from "../studies/reference.js";
import { parseShard } from "../studies/shard.js";
import {
  runStatistics, STATISTICS, type StatisticFields, type StatisticsDefinition, type StatisticsResult,
  type StatisticsRow, type WindowEnergy,
} from "../studies/statistics.js";
import { statisticsFile, type StatisticsFileInfo, type StatisticsRecord } from "../io/statisticsOutput.js";
import { numberOption, rejectUnknown, stringOption, type ParsedArgs } from "./args.js";
import { NEVER_STOP, type CliContext } from "./context.js";
import { fmt, loadScenarioArg, table, writeFileAtomic, writeJson, writeText } from "./io.js";
import { LIMIT_OPTIONS, LIMIT_USAGE, limitsFromArgs } from "./limitArgs.js";
import { userPath } from "./paths.js";
import { cacheDirectory, DiskReferenceCache } from "./referenceStore.js";
import { stepwellVersion } from "./runOutput.js";
import { solverIdentity } from "./solverIdentity.js";
import { numberList, parseMethodList, progressReporter, reportInterrupted, steppersFromArgs } from "./studyArgs.js";

export const STATISTICS_USAGE =
  "statistics SCENARIO (--methods LIST | --steppers FILE) (--dts d1,d2,… | --dt-factors f1,f2,…) --spin-up S --window S [--sample-every S] " +
  "[--reference-dt S] [--reference-method M] [--ensemble N] [--seed N] [--json FILE] [--csv FILE] [--netcdf FILE] [--shard i/n] [--no-cache] " + LIMIT_USAGE;

const SHORT: Record<string, string> = {
  meanSurface: "mean η", surfaceStd: "std η", meanThickness: "mean h", meanKineticEnergy: "mean KE",
  meanEnergy: "mean E", meanWindPower: "wind", meanDragLoss: "drag", meanViscousLoss: "viscous", meanResidual: "residual",
};

export function statisticsCsv(rows: StatisticsRow[]): string {
  const q = (s: string) => (/[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
  const n = (v: number | null) => (v === null || !Number.isFinite(v) ? "" : String(v));
  const b = (v: boolean | null) => (v === null ? "" : String(v));
  const cap = (s: string) => s[0].toUpperCase() + s.slice(1);
  const header = ["label", "method", "dt", "dtRatioToRk4", "status", ...STATISTICS.map((s) => `error${cap(s)}`), ...STATISTICS.map((s) => `within${cap(s)}`),
    "wallSeconds", "rhsEvaluations", "matvecs"];
  return [header.join(","), ...rows.map((r) => [q(r.label), q(r.method), n(r.dt), n(r.dtRatioToRk4), r.status, ...STATISTICS.map((s) => n(r.errors[s])),
    ...STATISTICS.map((s) => b(r.withinNoise[s])), n(r.wallSeconds), n(r.rhsEvaluations), n(r.matvecs)].join(","))].join("\n") + "\n";
}

export function printStatistics(rows: StatisticsRow[], out: (s: string) => void, result?: Pick<StatisticsResult, "reference" | "noiseFloor" | "spinUp" | "window" | "samples" | "sampleEvery">): void {
  const e = (r: StatisticsRow, s: (typeof STATISTICS)[number]) => {
    const v = r.errors[s];
    if (v === null) return "—";
    return fmt(v, "", 3) + (r.withinNoise[s] === true ? " ✓" : r.withinNoise[s] === false ? " ✗" : "");
  };
  if (result) {
    const ref = result.reference;
    out(`Spin-up ${fmt(result.spinUp / 86400, "days")}, window ${fmt(result.window / 86400, "days")} (${result.samples} samples every ${fmt(result.sampleEvery, "s")}); ` +
      `reference ${ref.label} at Δt = ${fmt(ref.dt, "s")}, ensemble of ${ref.ensemble}.`);
    out(ref.ensemble > 1
      ? `Noise floor (largest difference between two members): ${STATISTICS.map((s) => `${SHORT[s]} ${fmt(result.noiseFloor[s] ?? NaN, "", 2)}`).join(", ")}`
      : "No noise floor (an ensemble of 1); give --ensemble N ≥ 2 to tell errors from chaos.");
  }
  out(table(["stepper", "Δt", "× RK4", "status", ...STATISTICS.map((s) => `err ${SHORT[s]}`), "wall"],
    rows.map((r) => [r.label, fmt(r.dt, "s"), fmt(r.dtRatioToRk4, "", 3), r.status, ...STATISTICS.map((s) => e(r, s)), fmt(r.wallSeconds, "s", 3)])));
  if (rows.some((r) => Object.values(r.withinNoise).some((v) => v !== null))) out("✓: within the noise floor of the reference ensemble; ✗: above it.");
}

export function statisticsDefinition(args: ParsedArgs): StatisticsDefinition {
  const limits = limitsFromArgs(args);
  const steppers = steppersFromArgs(args, null, ["methods"]);
  const field = args.options.has("steppers") ? "--steppers" : "--methods";
  checkListLength(steppers.length, "studyMethods", limits, field);
  const dts = numberList(args, "dts");
  const dtFactors = numberList(args, "dt-factors");
  if (dts) checkListLength(dts.length, "studyDts", limits, "--dts");
  if (dtFactors) checkListLength(dtFactors.length, "studyDts", limits, "--dt-factors");
  if (dts && dtFactors) throw new SolverError("bad-input", "--dts: give either --dts (seconds) or --dt-factors (multiples of the RK4 limit), not both", "--dts");
  if (!dts && !dtFactors) throw new SolverError("bad-input", "--dts: give the time steps with --dts d1,d2,… (seconds) or --dt-factors f1,f2,… (multiples of the RK4 limit)", "--dts");
  const spinUp = numberOption(args, "spin-up");
  if (spinUp === undefined) throw new SolverError("bad-input", "--spin-up: give the spin-up time in seconds before the window (0 for none)", "--spin-up");
  if (!(spinUp >= 0)) throw new SolverError("bad-input", `--spin-up: must be ≥ 0 s, got ${spinUp}`, "--spin-up");
  const window = numberOption(args, "window");
  if (window === undefined) throw new SolverError("bad-input", "--window: give the length of the averaging window in seconds", "--window");
  if (!(window > 0)) throw new SolverError("bad-input", `--window: must be > 0 s, got ${window}`, "--window");
  const ensemble = numberOption(args, "ensemble", { positive: true, integer: true });
  if (ensemble !== undefined) checkListLength(ensemble, "ensemble", limits, "--ensemble");
  const refMethod = stringOption(args, "reference-method");
  let referenceSpec;
  if (refMethod !== undefined) {
    const list = parseMethodList(refMethod, "--reference-method");
    if (list.length !== 1) throw new SolverError("bad-input", "--reference-method: give one method", "--reference-method");
    referenceSpec = list[0];
  }
  return {
    limits, steppers, field, dts, dtFactors, spinUp, window, sampleEvery: numberOption(args, "sample-every", { positive: true }),
    referenceSpec, referenceDt: numberOption(args, "reference-dt", { positive: true }), ensemble,
    seed: numberOption(args, "seed", { integer: true }),
  };
}

/**
 * `--netcdf FILE`: the reference's and every completed row's statistic fields, one record each (see
 * solver/io/statisticsOutput.ts). Collected through the study's `onFields` hook, written once at the end.
 */
export class StatisticsNetcdf {
  readonly records: StatisticsRecord[] = [];
  constructor(readonly path: string, readonly built: BuiltScenario) {}
  /** The study's `onFields` hook: the reference (row null) comes first, then each completed row. */
  add = (row: { label: string; dt: number } | null, fields: StatisticFields, energy: WindowEnergy): void => {
    this.records.push({ label: row ? row.label : "reference", dt: row ? row.dt : NaN, fields, energy });
  };
  write(info: StatisticsFileInfo, reference: { label: string; dt: number }): void {
    const r = this.records[0];
    if (r && Number.isNaN(r.dt)) this.records[0] = { ...r, label: `reference ${reference.label}`, dt: reference.dt };
    const target = userPath(this.path);
    try {
      writeFileAtomic(target, statisticsFile(this.built, info, this.records));
    } catch (e) {
      if (e instanceof SolverError) throw e;
      throw new SolverError("bad-input", `--netcdf: cannot write ${target} (${(e as Error).message})`, "--netcdf");
    }
  }
}

export function statisticsCommand(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext = NEVER_STOP): number {
  rejectUnknown(args, ["methods", "steppers", "dts", "dt-factors", "spin-up", "window", "sample-every", "reference-dt", "reference-method", "ensemble", "seed",
    "json", "csv", "netcdf", "shard", "no-cache", ...LIMIT_OPTIONS], "statistics");
  const scenario = parseScenario(loadScenarioArg(args.positional[0]), "", { limits: limitsFromArgs(args), runLength: false });
  if (args.positional.length > 1) throw new SolverError("bad-input", `SCENARIO: give one scenario, got ${args.positional.length} words (${args.positional.join(" ")})`, "SCENARIO");
  const def = statisticsDefinition(args);
  const shardText = stringOption(args, "shard");
  const shard = shardText !== undefined ? parseShard(shardText) : undefined;
  const json = stringOption(args, "json");
  const csv = stringOption(args, "csv");
  const netcdfPath = stringOption(args, "netcdf");
  if (shard && !json) throw new SolverError("bad-input", "--json: a sharded run writes a partial result; give --json FILE (then join the parts with merge)", "--json");
  const warn = (m: string) => err(`stepwell statistics: warning: ${m}`);
  const solver = solverIdentity();
  const cache: ReferenceCache = args.options.has("no-cache") ? referenceCache : new DiskReferenceCache(cacheDirectory(), solver, warn);
  const clock = () => performance.now() / 1000;
  const built = buildScenario(scenario);
  const nc = netcdfPath ? new StatisticsNetcdf(netcdfPath, built) : null;
  const hooks = {
    clock, onProgress: progressReporter(err, clock, "statistics"), cache, solver, onWarning: warn, shouldCancel: () => ctx.stopReason() !== null,
    ...(nc ? { onFields: nc.add } : {}),
  };
  const writeNetcdf = (r: { spinUp: number; window: number; sampleEvery: number; samples: number; reference: { label: string; dt: number; ensemble: number } }) => {
    nc?.write({ version: stepwellVersion(), spinUp: r.spinUp, window: r.window, sampleEvery: r.sampleEvery, samples: r.samples, ensemble: r.reference.ensemble }, r.reference);
  };
  try {
    if (shard) {
      const part = runStatistics(built, def, { ...hooks, shard });
      out(`slice ${shard.index}/${shard.count}: ${part.items.length} of ${part.nItems} runs`);
      printStatistics(part.rows, out);
      writeJson(json!, part);
      if (csv) writeText(csv, statisticsCsv(part.rows), "--csv");
      writeNetcdf({ ...part.plan, reference: part.reference });
      return 0;
    }
    const result = runStatistics(built, def, hooks);
    printStatistics(result.rows, out, result);
    if (json) writeJson(json, result);
    if (csv) writeText(csv, statisticsCsv(result.rows), "--csv");
    writeNetcdf(result);
    return 0;
  } catch (e) {
    return reportInterrupted(e, ctx, { command: "statistics", json, csv, what: "the reference runs", print: (rows) => printStatistics(rows, out), toCsv: statisticsCsv }, err);
  }
}

