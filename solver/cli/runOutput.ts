import { readFileSync } from "node:fs";
import { userPath } from "./paths.js";
import { basename, resolve } from "node:path";
import { SolverError } from "../errors.js";
import type { Run } from "../driver/run.js";
import { fileSize } from "../io/netcdf.js";
import { checkRunFile, findRecord, meshMismatch, restoreRun, RunFileWriter } from "../io/runOutput.js";
import { numberOption, stringOption, type ParsedArgs } from "./args.js";
import { NetcdfReader, NetcdfStream } from "./netcdfFile.js";

/** Options of `run` handled here. */
export const RUN_OUTPUT_OPTIONS = ["netcdf", "every", "restart", "restart-time"] as const;

/** Declared bounds on what one run may write (checked before the run starts). */
export const MAX_OUTPUT_TIMES = 1_000_000;
export const MAX_OUTPUT_BYTES = 2 ** 40;

let cachedVersion: string | undefined;
/** Stepwell's version, from package.json. */
export function stepwellVersion(): string {
  if (cachedVersion === undefined) {
    try {
      cachedVersion = String((JSON.parse(readFileSync(new URL("../../package.json", import.meta.url), "utf8")) as { version?: unknown }).version ?? "unknown");
    } catch {
      cachedVersion = "unknown";
    }
  }
  return cachedVersion;
}

export interface RestartInfo {
  file: string;
  time: number;
  step: number;
  note: string | null;
}

/**
 * `--restart FILE [--restart-time T]`: put the stored state of FILE (its last output time, or time T) into the
 * run. Every problem is one line naming --restart or --restart-time.
 */
export function applyRestart(args: ParsedArgs, run: Run): RestartInfo | null {
  const given = stringOption(args, "restart");
  const file = given === undefined ? undefined : userPath(given); // from where the user started, as every path
  const tText = args.options.has("restart-time") ? numberOption(args, "restart-time") : undefined;
  if (file === undefined) {
    if (tText !== undefined) throw new SolverError("bad-input", "--restart-time: needs --restart FILE (the file to continue from)", "--restart-time");
    return null;
  }
  const bad = (msg: string) => new SolverError("bad-input", `--restart: ${msg}`, "--restart");
  const reader = NetcdfReader.open(file, bad);
  try {
    const h = reader.header;
    const problem = checkRunFile(h, run);
    if (problem) throw bad(`${file} ${problem}`);
    const worst = meshMismatch(run, reader.read("face_x") as Float64Array, reader.read("face_y") as Float64Array);
    if (!(worst <= 1e-6 * run.mesh.spacing)) {
      throw bad(`${file} holds another mesh than scenario "${run.built.scenario.name}" (cell centres differ by up to ${worst.toPrecision(3)} m)`);
    }
    const times = reader.series("time");
    if (times.length === 0) throw bad(`${file} holds no output time`);
    const index = findRecord(times, tText);
    if (index < 0) {
      const list = times.length <= 8 ? Array.from(times).join(", ") : `${times[0]}, ${times[1]}, …, ${times[times.length - 1]} (${times.length} times)`;
      throw new SolverError("bad-input", `--restart-time: ${tText} s is not an output time of ${file}; it holds t = ${list} s`, "--restart-time");
    }
    const time = times[index];
    const step = Number((reader.read("step", index) as Float64Array)[0]);
    if (!(Number.isInteger(step) && step >= 0)) throw bad(`${file} stores step ${step} at t = ${time} s, not a step count`);
    const sv = reader.variable("stepper_state");
    const note = restoreRun(run, {
      thickness: reader.read("layer_thickness", index) as Float64Array,
      velocity: reader.read("normal_velocity", index) as Float64Array,
      time, step,
      stepperState: sv ? (reader.read("stepper_state", index) as Float64Array) : undefined,
      stepperLabel: sv ? (sv.attributes.get("stepper_label") as string | undefined) : undefined,
    });
    const c = run.check();
    if (!c.ok) throw bad(`${file} holds a state that is not usable at t = ${time} s (${c.reason})`);
    return { file, time, step, note };
  } finally {
    reader.close();
  }
}

/** The file a run streams its output times to. */
export class RunOutput {
  readonly everySteps: number;
  private lastStep = -1;
  private constructor(readonly writer: RunFileWriter, readonly stream: NetcdfStream, every: number, dt: number) {
    this.everySteps = Math.max(1, Math.round(every / dt));
  }

  /**
   * `--netcdf FILE [--every S]` (default: the scenario's outputInterval, else duration/24); null without --netcdf.
   * `totalSteps` is the number of steps this run will take (for the declared bound on the file).
   */
  static open(args: ParsedArgs, run: Run, totalSteps: number, restart: RestartInfo | null): RunOutput | null {
    const given = stringOption(args, "netcdf");
    const file = given === undefined ? undefined : userPath(given);
    const everyOpt = numberOption(args, "every", { positive: true });
    if (file === undefined) {
      if (everyOpt !== undefined) throw new SolverError("bad-input", "--every: needs --netcdf FILE (the file the output times go to)", "--every");
      return null;
    }
    if (restart && resolve(file) === resolve(restart.file)) {
      throw new SolverError("bad-input", `--netcdf: must name another file than --restart (${file}); the run would overwrite what it reads`, "--netcdf");
    }
    const s = run.built.scenario;
    const every = everyOpt ?? s.outputInterval ?? s.duration / 24;
    const writer = new RunFileWriter(run, {
      version: stepwellVersion(), every: Math.max(1, Math.round(every / run.dt)) * run.dt, // the interval really used: whole steps
      restartedFrom: restart ? { file: basename(restart.file), time: restart.time, step: restart.step } : undefined,
    });
    const everySteps = Math.max(1, Math.round(every / run.dt));
    const records = 2 + Math.floor(totalSteps / everySteps);
    const bytes = fileSize(writer.layout, records);
    if (records > MAX_OUTPUT_TIMES || bytes > MAX_OUTPUT_BYTES) {
      throw new SolverError("bad-input", `--every: ${records} output times of ${writer.layout.recordSize} bytes (${(bytes / 2 ** 30).toPrecision(3)} GiB) exceed the bound of ` +
        `${MAX_OUTPUT_TIMES} times and ${MAX_OUTPUT_BYTES / 2 ** 40} TiB; write less often`, "--every");
    }
    const stream = NetcdfStream.create(file, writer.layout, writer.fixedData());
    const out = new RunOutput(writer, stream, every, run.dt);
    out.write(); // the starting state
    return out;
  }

  get file(): string { return this.stream.path; }
  get records(): number { return this.stream.records; }

  /** Write the run's current state as the next output time (once per step count). */
  write(): void {
    const run = this.writer.run;
    if (run.steps === this.lastStep) return;
    this.stream.append(this.writer.fill());
    this.lastStep = run.steps;
  }

  /** After a chunk of steps: write when `stepsDone` (since this run began) is a multiple of the interval. */
  afterSteps(stepsDone: number): void {
    if (stepsDone % this.everySteps === 0) this.write();
  }

  /** The final state (if not written yet), then close. */
  finish(): void {
    this.write();
    this.stream.close();
  }

  close(): void {
    this.stream.close();
  }
}

/** Steps per progress chunk so that output times and the drift samples of `execute` both fall on chunk ends. */
export function chunkFor(everySteps: number, sampleSteps: number): number {
  let a = everySteps;
  let b = sampleSteps;
  while (b) [a, b] = [b, a % b];
  return Math.max(1, a);
}
