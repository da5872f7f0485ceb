import type { BuiltScenario } from "../scenario/build.js";
import { ENERGY_STATISTICS, type EnergyStatistic, type StatisticFields, type WindowEnergy } from "../studies/statistics.js";
import { encodeFile, ncInt, planFile, type NcAttributes, type NcSchema, type NcValues, type NcVariable } from "./netcdf.js";
import { faceAttrs, ugridData, ugridDimensions, ugridTopology, ugridVariables } from "./ugrid.js";

/**
 * The NetCDF file of a statistics study (`statistics … --netcdf FILE`): the same UGRID 1.0 mesh as a run's file
 * and one record per run along the unlimited dimension `run` — the reference first (ensemble member 0), then every
 * stepper run that completed, in row order — holding that run's time-mean fields and window means. CF 1.8
 * attributes as in runOutput.ts; `sea_surface_height_above_geoid` and `cell_thickness` are the CF standard names
 * of η and h (see there); the means, the standard deviation and the kinetic energy have no standard name of their
 * own, so only their long names say what they are. Pure: returns the bytes.
 */

export const STATISTICS_FILE_KIND = "statistics";
/** Longest run label stored (longer labels are cut; the full ones are in the JSON result). */
export const LABEL_LENGTH = 64;

/** One record: a run's label and Δt, its fields and window means. */
export interface StatisticsRecord {
  label: string;
  dt: number;
  fields: StatisticFields;
  energy: WindowEnergy;
}

const ENERGY_VARIABLES: Record<EnergyStatistic, { name: string; long: string; units: string }> = {
  meanEnergy: { name: "mean_total_energy", long: "window mean of the total energy, kinetic + available potential", units: "J" },
  meanWindPower: { name: "mean_wind_power", long: "window mean of the power of the wind stress", units: "W" },
  meanDragLoss: { name: "mean_drag_loss", long: "window mean of the rate of energy loss to bottom drag", units: "W" },
  meanViscousLoss: { name: "mean_viscous_loss", long: "window mean of the rate of energy loss to viscosity", units: "W" },
  meanResidual: { name: "mean_energy_residual", long: "window mean of the rate at which the time stepper creates energy (budget residual)", units: "W" },
};

export interface StatisticsFileInfo {
  version: string;
  spinUp: number;
  window: number;
  sampleEvery: number;
  samples: number;
  ensemble: number;
}

export function statisticsFileSchema(built: BuiltScenario, info: StatisticsFileInfo): NcSchema {
  const s = built.scenario;
  const m = built.mesh;
  const topo = ugridTopology(m);
  const attributes: NcAttributes = {
    Conventions: "CF-1.8 UGRID-1.0",
    title: `Stepwell long-run statistics of scenario "${s.name}"`,
    source: `Stepwell ${info.version}`,
    stepwell_file: STATISTICS_FILE_KIND,
    stepwell_file_version: ncInt(1),
    scenario: JSON.stringify(s),
    spin_up: info.spinUp,
    window: info.window,
    sample_interval: info.sampleEvery,
    samples: ncInt(info.samples),
    reference_ensemble: ncInt(info.ensemble),
    reference_density: built.model.params.rho0,
    comment: "Record 0 is the reference run (unperturbed ensemble member); each further record is one stepper at one time step. " +
      "Means and the standard deviation are over the samples of the window, taken every sample_interval after spin_up. Energies per unit reference density × reference_density.",
  };
  const vars: NcVariable[] = [
    ...ugridVariables(),
    { name: "layer", type: "int", dimensions: ["layer"], attributes: { long_name: "layer index, 0 at the top", units: "1" } },
    { name: "run_label", type: "char", dimensions: ["run", "label_length"], attributes: { long_name: "stepper label of the run (the reference first)", units: "1" } },
    { name: "run_dt", type: "double", dimensions: ["run"], attributes: { long_name: "time step of the run", units: "s" } },
    { name: "mean_surface_height", type: "double", dimensions: ["run", "face"], attributes: faceAttrs({ standard_name: "sea_surface_height_above_geoid", long_name: "time mean of the free-surface height", units: "m", cell_methods: "run: point time: mean" }) },
    { name: "surface_height_std", type: "double", dimensions: ["run", "face"], attributes: faceAttrs({ long_name: "standard deviation in time of the free-surface height", units: "m" }) },
    { name: "mean_layer_thickness", type: "double", dimensions: ["run", "layer", "face"], attributes: faceAttrs({ standard_name: "cell_thickness", long_name: "time mean of the layer thickness", units: "m", cell_methods: "run: point time: mean" }) },
    { name: "mean_kinetic_energy", type: "double", dimensions: ["run", "layer", "face"], attributes: faceAttrs({ long_name: "time mean of the kinetic energy per unit mass", units: "m2 s-2" }) },
    ...ENERGY_STATISTICS.map((k): NcVariable => ({ name: ENERGY_VARIABLES[k].name, type: "double", dimensions: ["run"], attributes: { long_name: ENERGY_VARIABLES[k].long, units: ENERGY_VARIABLES[k].units } })),
  ];
  return {
    dimensions: [{ name: "run", length: "unlimited" }, ...ugridDimensions(topo, m), { name: "layer", length: built.model.params.nLayers }, { name: "label_length", length: LABEL_LENGTH }],
    attributes, variables: vars,
  };
}

/** The whole file: the mesh and one record per run (reference first). */
export function statisticsFile(built: BuiltScenario, info: StatisticsFileInfo, records: readonly StatisticsRecord[]): Uint8Array {
  const layout = planFile(statisticsFileSchema(built, info));
  const m = built.mesh;
  const L = built.model.params.nLayers;
  const rho0 = built.model.params.rho0;
  const fixed: Record<string, NcValues> = { ...ugridData(ugridTopology(m), m), layer: Array.from({ length: L }, (_, k) => k) };
  const cut = (s: string) => {
    let t = s;
    while (new TextEncoder().encode(t).length > LABEL_LENGTH) t = t.slice(0, -1);
    return t;
  };
  const recs = records.map((r) => {
    const o: Record<string, NcValues> = {
      run_label: cut(r.label), run_dt: [r.dt],
      mean_surface_height: r.fields.meanSurface, surface_height_std: r.fields.surfaceStd,
      mean_layer_thickness: r.fields.meanThickness, mean_kinetic_energy: r.fields.meanKineticEnergy,
    };
    for (const k of ENERGY_STATISTICS) o[ENERGY_VARIABLES[k].name] = [r.energy[k] * rho0];
    return o;
  });
  return encodeFile(layout, fixed, recs);
}

// TextEncoder exists in Node and in workers; the solver's DOM-free lib leaves its type out.
declare const TextEncoder: { new (): { encode(s: string): Uint8Array } };
