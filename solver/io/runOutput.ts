import { SolverError } from "../errors.js";
import type { Budget } from "../diagnostics/budget.js";
import type { Run } from "../driver/run.js";
import { cellReconstruction, reconstructCellVelocity, type CellReconstruction } from "../mesh/reconstruct.js";
import { surfaceHeight } from "../diagnostics/fields.js";
import { encodeFixed, ncInt, planFile, RecordBuffer, type NcAttributes, type NcHeader, type NcLayout, type NcSchema, type NcVariable } from "./netcdf.js";
import { edgeAttrs, faceAttrs, ugridData, ugridDimensions, ugridTopology, ugridVariables, type UgridTopology } from "./ugrid.js";

/**
 * What a Stepwell run writes to NetCDF: a UGRID 1.0 mesh topology with CF 1.8 metadata, the fixed mesh and
 * layer data, and one record per output time holding the full state in double precision (so a run can be
 * restarted from any record bit for bit), derived fields and the diagnostic time series.
 *
 * CF standard names (CF Standard Name Table; each entry checked against a published copy of the table, or
 * marked "from memory"):
 *   time                             — the CF time coordinate (CF conventions §4.4)
 *   projection_x/y_coordinate        — planar x/y in metres (from memory)
 *   cell_area                        — "horizontal area of a grid cell" (table; CMIP6 areacello uses it)
 *   cell_thickness                   — "Thickness means the vertical extent of a layer. Cell refers to a model grid-cell" (table)
 *   sea_surface_height_above_geoid   — "in an ocean GCM the geoid is the surface of zero depth" (table): η = b + Σ h_k, 0 at rest
 *   sea_floor_depth_below_geoid      — depth of the sea floor below the resting surface (from memory)
 *   sea_water_x_velocity / _y_       — "x indicates a vector component along the grid x-axis" (from memory)
 *   sea_water_density                — layer density (from memory)
 * Normal velocity, layer volumes, energies and the budget terms have no standard name in the table.
 */

/** Stepwell's own marks, by which a restart recognises its files. */
export const FILE_KIND_ATTRIBUTE = "stepwell_file";
export const FILE_KIND = "run";
export const FILE_VERSION_ATTRIBUTE = "stepwell_file_version";
export const FILE_VERSION = 1;
export const TIME_UNITS = "seconds since 2000-01-01 00:00:00";

/** The energy budget of the run so far, per unit reference density [m⁵/s²], cumulative from the run's start. */
export interface EnergyBudgetTerms {
  change: number;
  windWork: number;
  dragLoss: number;
  viscousLoss: number;
  residual: number;
}

const BUDGET_SERIES: readonly { key: keyof EnergyBudgetTerms; name: string; long: string }[] = [
  { key: "change", name: "energy_change", long: "change of total energy since the start of the run" },
  { key: "windWork", name: "wind_work", long: "work done by the wind stress since the start of the run" },
  { key: "dragLoss", name: "drag_loss", long: "energy lost to bottom drag since the start of the run" },
  { key: "viscousLoss", name: "viscous_loss", long: "energy lost to Laplacian and biharmonic viscosity since the start of the run" },
  { key: "residual", name: "energy_residual", long: "change − (wind work − drag loss − viscous loss): energy created or destroyed by the time stepper" },
];

/**
 * Hook for the energy budget: a run that keeps one exposes `energyBudget` (a method or a property) returning the
 * terms above; when present, every record carries them. Returns null when the run has none.
 */
export function energyBudgetOf(run: unknown): EnergyBudgetTerms | null {
  const raw = (run as { energyBudget?: unknown } | null)?.energyBudget;
  const v = typeof raw === "function" ? (raw as () => unknown).call(run) : raw;
  if (!v || typeof v !== "object") return null;
  const o = v as Record<string, unknown>;
  return BUDGET_SERIES.every((s) => typeof o[s.key] === "number") ? (o as unknown as EnergyBudgetTerms) : null;
}

/** Hook for steppers that carry values between steps (`saveState`/`loadState` of the stepper interface). */
export interface StatefulStepper {
  saveState?(): Float64Array;
  loadState?(data: Float64Array): void;
}

export function stepperMemory(run: Run): StatefulStepper {
  return run.stepper.instance;
}

export interface RunFileOptions {
  /** Stepwell's version (package.json). */
  version: string;
  /** Output interval [s], written as an attribute. */
  every: number;
  /** Where the run started from, when it is a restart (written as an attribute). */
  restartedFrom?: { file: string; time: number; step: number };
}


/** The file's schema for a run. */
export function runFileSchema(run: Run, topo: UgridTopology, o: RunFileOptions): NcSchema {
  const s = run.built.scenario;
  const m = run.mesh;
  const p = run.model.params;
  const stateLength = stepperMemory(run).saveState?.().length ?? 0;
  const budget = energyBudgetOf(run) !== null;
  const dims = [
    { name: "time", length: "unlimited" as const },
    ...ugridDimensions(topo, m),
    { name: "layer", length: p.nLayers },
    ...(stateLength > 0 ? [{ name: "stepper_state", length: stateLength }] : []),
  ];
  const attributes: NcAttributes = {
    Conventions: "CF-1.8 UGRID-1.0",
    title: `Stepwell run of scenario "${s.name}" with ${run.stepper.label}`,
    source: `Stepwell ${o.version}`,
    [FILE_KIND_ATTRIBUTE]: FILE_KIND,
    [FILE_VERSION_ATTRIBUTE]: ncInt(FILE_VERSION),
    scenario: JSON.stringify(s),
    stepper: JSON.stringify(run.spec),
    stepper_label: run.stepper.label,
    time_step: run.dt,
    output_interval: o.every,
    reference_density: p.rho0,
    gravity: p.gravity,
    mesh_kind: m.kind,
    domain_width: m.width,
    domain_height: m.height,
    mesh_spacing: m.spacing,
    comment: "The state (layer_thickness, normal_velocity, time, step and any stepper_state) is stored exactly, so `stepwell run --restart FILE` continues bit for bit. " +
      "Energies are in joules (per unit reference density × reference_density). Faces that cross a periodic seam use copies of their nodes (node_vertex).",
    ...(o.restartedFrom ? { restarted_from: o.restartedFrom.file, restarted_at_time: o.restartedFrom.time, restarted_at_step: o.restartedFrom.step } : {}),
  };
  const vars: NcVariable[] = [
    ...ugridVariables(),
    { name: "bottom_depth", type: "double", dimensions: ["face"], attributes: faceAttrs({ standard_name: "sea_floor_depth_below_geoid", long_name: "depth of the sea floor below the resting surface", units: "m", positive: "down" }) },
    { name: "layer", type: "int", dimensions: ["layer"], attributes: { long_name: "layer index, 0 at the top", units: "1" } },
    { name: "layer_density", type: "double", dimensions: ["layer"], attributes: { standard_name: "sea_water_density", long_name: "density of each layer", units: "kg m-3" } },
    { name: "layer_rest_thickness", type: "double", dimensions: ["layer"], attributes: { long_name: "thickness of each layer at rest", units: "m" } },
    { name: "reduced_gravity", type: "double", dimensions: ["layer"], attributes: { long_name: "reduced gravity at the top of each layer (g for the free surface)", units: "m s-2" } },
    // ---- one record per output time
    { name: "time", type: "double", dimensions: ["time"], attributes: { standard_name: "time", long_name: "simulated time", units: TIME_UNITS, calendar: "standard", axis: "T" } },
    { name: "step", type: "double", dimensions: ["time"], attributes: { long_name: "number of time steps taken since the run began", units: "1" } },
    { name: "layer_thickness", type: "double", dimensions: ["time", "layer", "face"], attributes: faceAttrs({ standard_name: "cell_thickness", long_name: "layer thickness", units: "m" }) },
    { name: "surface_height", type: "double", dimensions: ["time", "face"], attributes: faceAttrs({ standard_name: "sea_surface_height_above_geoid", long_name: "free-surface height above its resting level", units: "m" }) },
    { name: "normal_velocity", type: "double", dimensions: ["time", "layer", "edge"], attributes: edgeAttrs({ long_name: "velocity normal to each edge, along edge_normal", units: "m s-1" }) },
    { name: "velocity_x", type: "double", dimensions: ["time", "layer", "face"], attributes: faceAttrs({ standard_name: "sea_water_x_velocity", long_name: "x velocity at cell centres (reconstructed from the normal velocities, Perot 2000)", units: "m s-1" }) },
    { name: "velocity_y", type: "double", dimensions: ["time", "layer", "face"], attributes: faceAttrs({ standard_name: "sea_water_y_velocity", long_name: "y velocity at cell centres (reconstructed from the normal velocities, Perot 2000)", units: "m s-1" }) },
    { name: "total_energy", type: "double", dimensions: ["time"], attributes: { long_name: "total energy, kinetic + available potential", units: "J" } },
    { name: "kinetic_energy", type: "double", dimensions: ["time"], attributes: { long_name: "kinetic energy", units: "J" } },
    { name: "potential_energy", type: "double", dimensions: ["time"], attributes: { long_name: "available potential energy (measured from the rest state)", units: "J" } },
    { name: "layer_volume", type: "double", dimensions: ["time", "layer"], attributes: { long_name: "volume of each layer, the sum over cells of area × thickness", units: "m3" } },
    ...(budget ? BUDGET_SERIES.map((b): NcVariable => ({ name: b.name, type: "double", dimensions: ["time"], attributes: { long_name: b.long, units: "J" } })) : []),
    ...(stateLength > 0 ? [{
      name: "stepper_state", type: "double" as const, dimensions: ["time", "stepper_state"],
      attributes: { long_name: "values the time stepper carries from one step to the next (its saveState)", units: "1", stepper_label: run.stepper.label },
    }] : []),
  ];
  return { dimensions: dims, attributes, variables: vars };
}

/**
 * Everything needed to write a run's file: the layout, the fixed data, and `fill`, which puts the run's
 * current state into the (reused) record buffer. Work arrays are allocated here, once.
 */
export class RunFileWriter {
  readonly layout: NcLayout;
  readonly topology: UgridTopology;
  readonly record: RecordBuffer;
  readonly hasBudget: boolean;
  readonly stateLength: number;
  private readonly recon: CellReconstruction;
  private readonly eta: Float64Array;
  private readonly vx: Float64Array;
  private readonly vy: Float64Array;
  private readonly volumes: Float64Array;

  constructor(readonly run: Run, o: RunFileOptions) {
    this.topology = ugridTopology(run.mesh);
    const schema = runFileSchema(run, this.topology, o);
    this.layout = planFile(schema);
    this.record = new RecordBuffer(this.layout);
    this.hasBudget = this.layout.variables.has("energy_change");
    this.stateLength = this.layout.variables.get("stepper_state")?.count ?? 0;
    this.recon = cellReconstruction(run.mesh);
    const { nCells: nc, nLayers: L } = run.model.layout;
    this.eta = new Float64Array(nc);
    this.vx = new Float64Array(L * nc);
    this.vy = new Float64Array(L * nc);
    this.volumes = new Float64Array(L);
  }

  /** The fixed variables' data, in file order (name, bytes padded to vsize). */
  *fixedData(): Generator<{ name: string; begin: number; bytes: Uint8Array }> {
    const m = this.run.mesh;
    const p = this.run.model.params;
    const t = this.topology;
    const L = p.nLayers;
    const bottomDepth = new Float64Array(m.nCells);
    for (let i = 0; i < m.nCells; i++) bottomDepth[i] = -p.bottom[i];
    const data: Record<string, ArrayLike<number>> = {
      ...ugridData(t, m), bottom_depth: bottomDepth, layer: Array.from({ length: L }, (_, k) => k),
      layer_density: p.densities, layer_rest_thickness: p.nominalThickness, reduced_gravity: p.reducedGravity,
    };
    for (const v of this.layout.variables.values()) {
      if (v.record) continue;
      const d = data[v.variable.name];
      if (!d) throw new Error(`run file: no data for fixed variable ${v.variable.name}`);
      yield { name: v.variable.name, begin: v.begin, bytes: encodeFixed(this.layout, v.variable.name, d) };
    }
  }

  /** Fill the record buffer with the run's current state; `budget` is the run's budget of that state. */
  fill(budget: Budget = this.run.budget()): RecordBuffer {
    const run = this.run;
    const { nCells: nc, nEdges: ne, nLayers: L, uOffset } = run.model.layout;
    const x = run.state;
    const rho0 = run.model.params.rho0;
    const r = this.record;
    r.setScalar("time", run.time);
    r.setScalar("step", run.steps);
    r.set("layer_thickness", x.subarray(0, L * nc));
    surfaceHeight(this.eta, run.model, x);
    r.set("surface_height", this.eta);
    r.set("normal_velocity", x.subarray(uOffset, uOffset + L * ne));
    for (let k = 0; k < L; k++) reconstructCellVelocity(this.vx, this.vy, run.mesh, this.recon, x, uOffset + k * ne, k * nc);
    r.set("velocity_x", this.vx);
    r.set("velocity_y", this.vy);
    r.setScalar("total_energy", budget.energy * rho0);
    r.setScalar("kinetic_energy", budget.kinetic * rho0);
    r.setScalar("potential_energy", budget.potential * rho0);
    for (let k = 0; k < L; k++) this.volumes[k] = budget.mass[k];
    r.set("layer_volume", this.volumes);
    if (this.hasBudget) {
      const b = energyBudgetOf(run);
      for (const s of BUDGET_SERIES) r.setScalar(s.name, b ? b[s.key] * rho0 : NaN);
    }
    if (this.stateLength > 0) {
      const st = stepperMemory(run).saveState?.();
      if (!st || st.length !== this.stateLength) {
        throw new SolverError("bad-input", `stepper: its saveState() returned ${st?.length ?? "nothing"} values, first ${this.stateLength}; the carried state must keep its length`, "stepper");
      }
      r.set("stepper_state", st);
    }
    return r;
  }
}

// ---------------------------------------------------------------- restart

/** What a restart needs from a file's header, checked against the run it will continue. */
export interface RestartPlan {
  /** Record to read. */
  index: number;
  time: number;
}

/** Check that a parsed header is a Stepwell run file matching the run; returns the problem as one line, or null. */
export function checkRunFile(h: NcHeader, run: Run): string | null {
  const kind = h.attributes.get(FILE_KIND_ATTRIBUTE);
  if (kind !== FILE_KIND) return `is NetCDF but not Stepwell run output (no ${FILE_KIND_ATTRIBUTE} = "${FILE_KIND}" attribute)`;
  const ver = h.attributes.get(FILE_VERSION_ATTRIBUTE);
  if (!Array.isArray(ver) || ver[0] !== FILE_VERSION) return `is Stepwell output of file version ${Array.isArray(ver) ? ver[0] : "?"}; this Stepwell reads version ${FILE_VERSION}`;
  for (const v of ["time", "step", "layer_thickness", "normal_velocity", "face_x", "face_y"]) {
    if (!h.variables.has(v)) return `is Stepwell output without the variable ${v}`;
  }
  const dim = (n: string) => h.dimensions.find((d) => d.name === n)?.length ?? -1;
  const m = run.mesh;
  const L = run.model.params.nLayers;
  if (dim("layer") !== L) return `has ${dim("layer")} layers; scenario "${run.built.scenario.name}" has ${L}`;
  if (dim("face") !== m.nCells || dim("edge") !== m.nEdges) {
    return `holds a mesh of ${dim("face")} cells and ${dim("edge")} edges; scenario "${run.built.scenario.name}" has ${m.nCells} cells and ${m.nEdges} edges`;
  }
  if (h.numrecs === 0) return "holds no output time";
  return null;
}

/** Index of the record whose time is `t` (within round-off), the last one when `t` is undefined; −1 if none. */
export function findRecord(times: Float64Array, t: number | undefined): number {
  if (times.length === 0) return -1;
  if (t === undefined) return times.length - 1;
  const tol = 1e-9 * Math.max(1, Math.abs(t));
  for (let i = times.length - 1; i >= 0; i--) if (Math.abs(times[i] - t) <= tol) return i;
  return -1;
}

/** Largest distance between the file's cell centres and the run's, on the torus for a periodic mesh [m]. */
export function meshMismatch(run: Run, faceX: Float64Array, faceY: Float64Array): number {
  const m = run.mesh;
  let worst = 0;
  for (let i = 0; i < m.nCells; i++) {
    let dx = faceX[i] - m.cellX[i];
    let dy = faceY[i] - m.cellY[i];
    if (m.kind === "periodic") { dx -= m.width * Math.round(dx / m.width); dy -= m.height * Math.round(dy / m.height); }
    worst = Math.max(worst, Math.hypot(dx, dy));
  }
  return worst;
}

/**
 * Put a stored state into the run: thicknesses and normal velocities (exactly), time and step count, and the
 * stepper's carried values when it has any. Returns a note for the user, or null.
 */
export function restoreRun(
  run: Run, s: { thickness: Float64Array; velocity: Float64Array; time: number; step: number; stepperState?: Float64Array; stepperLabel?: string },
): string | null {
  const { uOffset } = run.model.layout;
  run.state.set(s.thickness, 0);
  run.state.set(s.velocity, uOffset);
  run.lastGood.set(run.state);
  run.time = s.time;
  run.steps = s.step;
  run.unstable = null;
  const mem = stepperMemory(run);
  if (!mem.loadState) return null;
  if (!s.stepperState) return `the file holds no carried state for ${run.stepper.label}; it starts afresh from the stored fields`;
  if (s.stepperLabel !== run.stepper.label) return `the file's carried stepper state belongs to ${s.stepperLabel ?? "another stepper"}; ${run.stepper.label} starts afresh from the stored fields`;
  mem.loadState(s.stepperState);
  return null;
}
