import { SolverError } from "../errors.js";

/**
 * Declared upper bounds on every input that sets an amount of work or memory. The scenario schema, the CLI and
 * the sandbox all read these; each is checked before any mesh is built or any array allocated. Bounds a user may
 * legitimately want raised name the CLI flag that raises them.
 */
export interface Limits {
  /** Cells along either side of the lattice a mesh is cut from (periodic: cellsX, cellsY; basin: its extent ÷ spacing). */
  readonly cellsPerSide: number;
  /** Cells of a mesh (basin: the estimated wet cells). Raised with --max-cells. */
  readonly cells: number;
  /** Estimated memory a run needs [bytes] (see `estimateRunBytes`). Raised with --max-memory. */
  readonly memoryBytes: number;
  /** Lattice points a basin is cut from (its bounding box with margins); allocated before the cells are known. */
  readonly latticePoints: number;
  /** Vertices of a polygon basin (their crossing check is quadratic in this). */
  readonly polygonVertices: number;
  /** Layers of a scenario. */
  readonly layers: number;
  /** Steps of one run, duration ÷ Δt (also every run of a study). Raised with --max-steps. */
  readonly steps: number;
  /** Simulated time of one run [s]. */
  readonly duration: number;
  /** Output times of one run (duration ÷ outputInterval): samples of the diagnostics and budget series. */
  readonly outputTimes: number;
  /** Δt values in one study (--dts, --dt-factors). */
  readonly studyDts: number;
  /** Steppers in one study (--methods, --steppers). */
  readonly studyMethods: number;
  /** Members of an ensemble of reference runs (a statistics study's --ensemble). */
  readonly ensemble: number;
}

export const LIMITS: Limits = Object.freeze({
  cellsPerSide: 4096,
  cells: 250_000,
  memoryBytes: 4e9,
  latticePoints: 4_000_000,
  polygonVertices: 5000,
  layers: 12,
  steps: 1_000_000,
  duration: 1e11,
  outputTimes: 100_000,
  studyDts: 64,
  studyMethods: 32,
  ensemble: 64,
});

/** The CLI flag that raises a bound, where there is one. */
export const LIMIT_FLAGS: Readonly<Partial<Record<keyof Limits, string>>> = Object.freeze({
  cells: "--max-cells",
  memoryBytes: "--max-memory",
  steps: "--max-steps",
});

/**
 * Bytes a run needs per cell, measured on periodic meshes of 9·10⁴ cells (process.memoryUsage().arrayBuffers
 * after building and one RK4 step): the mesh with its coefficient arrays ≈ 2.1 kB per cell, and about eight
 * state-sized vectors for RK4 with the driver's copies. The estimate rounds the mesh up and allows
 * `STATE_VECTORS` state-sized vectors (stage arrays, last good state, energy budget work); a state vector holds
 * one thickness and three edge velocities per cell and layer (a hexagonal mesh has three edges per cell).
 */
export const MESH_BYTES_PER_CELL = 2400;
export const STATE_BYTES_PER_CELL_LAYER = 8 * (1 + 3);
export const STATE_VECTORS = 24;

/** Estimated memory of a run on `cells` cells with `layers` layers [bytes]. */
export function estimateRunBytes(cells: number, layers: number): number {
  return cells * (MESH_BYTES_PER_CELL + layers * STATE_BYTES_PER_CELL_LAYER * STATE_VECTORS);
}

/** 1.5 GB, 320 MB, 12 kB (decimal units). */
export function formatBytes(b: number): string {
  if (!Number.isFinite(b)) return `${b} bytes`;
  const units = ["bytes", "kB", "MB", "GB", "TB", "PB", "EB"];
  let v = b;
  let u = 0;
  while (v >= 1000 && u < units.length - 1) { v /= 1000; u++; }
  return `${u === 0 ? Math.round(v) : Number(v.toPrecision(3))} ${units[u]}`;
}

/** A count in plain digits up to 10⁹, in exponent form beyond. */
export function formatCount(n: number): string {
  if (!Number.isFinite(n)) return String(n);
  return Math.abs(n) < 1e9 ? String(Math.round(n)) : n.toPrecision(3);
}

/** " (raise it with --max-steps N)" for a bound with a flag, "" otherwise. */
export function raiseHint(key: keyof Limits): string {
  const flag = LIMIT_FLAGS[key];
  if (!flag) return "";
  return ` (raise it with ${flag} ${key === "memoryBytes" ? "BYTES" : "N"})`;
}

/** The limits with some bounds raised (or lowered); checks each given value. */
export function withLimits(over: Partial<Record<keyof Limits, number>>, base: Limits = LIMITS): Limits {
  for (const [k, v] of Object.entries(over)) {
    if (v === undefined) continue;
    if (!(typeof v === "number" && v > 0 && Number.isFinite(v))) {
      const flag = LIMIT_FLAGS[k as keyof Limits] ?? k;
      throw new SolverError("bad-input", `${flag}: must be a positive number, got ${v}`, flag);
    }
  }
  const clean = Object.fromEntries(Object.entries(over).filter(([, v]) => v !== undefined));
  return Object.freeze({ ...base, ...clean });
}

/**
 * The number of steps a run of `duration` at `dt` takes, or a message naming what is over its bound.
 * `durationField`/`dtField` name where each value came from (a scenario field or a CLI option).
 */
export function runLengthProblem(
  duration: number, dt: number, limits: Limits, durationField: string, dtField: string,
): { field: string; message: string } | null {
  if (duration > limits.duration) {
    return { field: durationField, message: `is ${duration} s, more than the limit of ${limits.duration} s (${formatCount(limits.duration / (365.25 * 86400))} years) of simulated time` };
  }
  const steps = duration / dt;
  if (!(steps <= limits.steps)) {
    return {
      field: dtField,
      message: `is ${dt} s: ${duration} s of simulated time would take ${formatCount(Math.round(steps))} steps, more than the limit of ` +
        `${formatCount(limits.steps)} steps${raiseHint("steps")}`,
    };
  }
  return null;
}

/** Throwing form of `runLengthProblem`: "field: message". */
export function checkRunLength(duration: number, dt: number, limits: Limits, durationField: string, dtField: string): void {
  const p = runLengthProblem(duration, dt, limits, durationField, dtField);
  if (p) throw new SolverError("bad-input", `${p.field} ${p.message}`, p.field);
}

/** A step count given directly (e.g. --steps). */
export function checkStepCount(steps: number, limits: Limits, field: string): void {
  if (!(steps <= limits.steps)) {
    throw new SolverError("bad-input", `${field}: ${formatCount(steps)} steps is more than the limit of ${formatCount(limits.steps)} steps${raiseHint("steps")}`, field);
  }
}

/** The length of a study list (Δt values, steppers, ensemble members). */
export function checkListLength(n: number, key: "studyDts" | "studyMethods" | "ensemble", limits: Limits, field: string): void {
  const what = { studyDts: "Δt values", studyMethods: "steppers", ensemble: "ensemble members" }[key];
  if (n > limits[key]) throw new SolverError("bad-input", `${field}: ${n} ${what} is more than the limit of ${limits[key]} in one study`, field);
}
