/**
 * Starting a run from a stored state: a Stepwell NetCDF run file (what `stepwell run --netcdf` and the sandbox's
 * "NetCDF snapshot" write, and `--restart` reads), its last record. The stored thicknesses and velocities become
 * the run's initial state, so Reset returns to them; time and step count start at zero from there. A built-in
 * scenario may name such a file shipped with the app (`START_STATES`), loaded when the scenario is.
 */
import { SolverError } from "../solver/errors.js";
import type { Run } from "../solver/driver/run.js";
import { dataRange, decodeValues, parseHeader, type NcHeader } from "../solver/io/netcdf.js";
import { checkRunFile, meshMismatch } from "../solver/io/runOutput.js";

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

export function startFromFile(run: Run, bytes: Uint8Array, file: string): StartStateInfo {
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
  const saved = Float64Array.from(run.built.initial);
  run.built.initial.set(thickness, 0);
  run.built.initial.set(velocity, uOffset);
  run.reset();
  const c = run.check();
  if (!c.ok) {
    run.built.initial.set(saved);
    run.reset();
    throw bad(`holds a state that cannot be run (${c.reason})`);
  }
  const s = h.attributes.get("scenario");
  let scenario: string | null = null;
  if (typeof s === "string") { try { scenario = String((JSON.parse(s) as { name?: unknown }).name ?? "") || null; } catch { scenario = null; } }
  return { file, storedTime, storedStep, scenario };
}
