/**
 * Starting a run from a stored state: a Stepwell NetCDF run file (what `stepwell run --netcdf` and the sandbox's
 * "NetCDF snapshot" write, and `--restart` reads; its last record), or a compact spun-up state file
 * ("stepwell-state-1" JSON, solver/io/stateFile.ts). The stored thicknesses and velocities become the run's
 * initial state, so Reset returns to them; time and step count start at zero from there. A built-in scenario may
 * name such a file shipped with the app (`START_STATES`), loaded when the scenario is.
 */
import { SolverError } from "../solver/errors.js";
import type { Run } from "../solver/driver/run.js";
import { dataRange, decodeValues, parseHeader, type NcHeader } from "../solver/io/netcdf.js";
import { checkRunFile, meshMismatch } from "../solver/io/runOutput.js";
import { decodeState } from "../solver/io/stateFile.js";

export { START_STATES } from "./startStateList.js";

export interface StartStateInfo {
  file: string;
  /** Simulated time and step of the stored state in the run that wrote it. */
  storedTime: number;
  storedStep: number;
  /** Scenario name the file was written for (its `scenario` attribute), if it says. */
  scenario: string | null;
}

const FIELD = "startState";

/** "CDF" and a version byte: a NetCDF-3 file; anything else is read as a JSON state file. */
export function startFromFile(run: Run, bytes: Uint8Array, file: string): StartStateInfo {
  const isNetcdf = bytes.length >= 4 && bytes[0] === 0x43 && bytes[1] === 0x44 && bytes[2] === 0x46;
  return isNetcdf ? startFromRunFile(run, bytes, file) : startFromStateFile(run, bytes, file);
}

/** Make `state` the run's start (checked: a state that cannot be run is refused and the run left as it was). */
function adoptStart(run: Run, state: Float64Array, bad: (msg: string) => SolverError): void {
  const saved = Float64Array.from(run.built.initial);
  run.built.initial.set(state);
  run.reset();
  const c = run.check();
  if (!c.ok) {
    run.built.initial.set(saved);
    run.reset();
    throw bad(`holds a state that cannot be run (${c.reason})`);
  }
}

function startFromStateFile(run: Run, bytes: Uint8Array, file: string): StartStateInfo {
  let raw: unknown;
  try {
    raw = JSON.parse(new TextDecoder().decode(bytes));
  } catch (e) {
    throw new SolverError("bad-input", `${FIELD}: ${file} is neither a NetCDF run file nor a JSON state file (${(e as Error).message})`, FIELD);
  }
  const { state, time, step } = decodeState(run.model, raw, FIELD);
  adoptStart(run, state, (msg) => new SolverError("bad-input", `${FIELD}: ${file} ${msg}`, FIELD));
  const name = (raw as { scenario?: unknown }).scenario;
  return { file, storedTime: time, storedStep: step, scenario: typeof name === "string" && name ? name : null };
}

function startFromRunFile(run: Run, bytes: Uint8Array, file: string): StartStateInfo {
  const bad = (msg: string) => new SolverError("bad-input", `${FIELD}: ${file} ${msg}`, FIELD);
  let h: NcHeader;
  try {
    h = parseHeader(bytes);
  } catch (e) {
    throw bad(`is not a NetCDF run file (${(e as Error).message})`);
  }
  const problem = checkRunFile(h, run);
  if (problem) throw bad(problem);
  const read = (name: string, index = 0) => {
    const v = h.variables.get(name)!;
    const r = dataRange(h, v, index);
    try {
      return decodeValues(v.type, bytes, r.offset, v.count) as Float64Array;
    } catch {
      throw bad(`ends inside the variable ${name}${v.record ? ` of record ${index}` : ""} (a truncated file)`);
    }
  };
  const worst = meshMismatch(run, read("face_x"), read("face_y"));
  if (!(worst <= 1e-6 * run.mesh.spacing)) throw bad(`holds another mesh than scenario "${run.built.scenario.name}" (cell centres differ by up to ${worst.toPrecision(3)} m)`);
  const recordBegin = Math.min(...[...h.variables.values()].filter((v) => v.record).map((v) => v.begin));
  const records = h.numrecs >= 0 ? h.numrecs : Math.floor((bytes.length - recordBegin) / h.recordSize);
  if (!(records >= 1)) throw bad("holds no output time");
  const last = records - 1;
  const thickness = read("layer_thickness", last);
  const velocity = read("normal_velocity", last);
  const storedTime = read("time", last)[0];
  const storedStep = read("step", last)[0];
  const { uOffset } = run.model.layout;
  const state = Float64Array.from(run.built.initial);
  state.set(thickness, 0);
  state.set(velocity, uOffset);
  adoptStart(run, state, bad);
  const s = h.attributes.get("scenario");
  let scenario: string | null = null;
  if (typeof s === "string") { try { scenario = String((JSON.parse(s) as { name?: unknown }).name ?? "") || null; } catch { scenario = null; } }
  return { file, storedTime, storedStep, scenario };
}
