import { SolverError } from "../errors.js";
import { Run } from "../driver/run.js";
import { surfaceHeight } from "../diagnostics/fields.js";
import { seededRandom } from "../mesh/hexLattice.js";
import type { ShallowWaterModel } from "../model/shallowWater.js";
import { kineticEnergy } from "../model/terms.js";
import type { BuiltScenario } from "../scenario/build.js";
import { checkListLength, checkRunLength, LIMITS, type Limits } from "../scenario/limits.js";
import type { StepperSpec } from "../scenario/schema.js";
import { definitionOf } from "../time/registry.js";
import { advanceSteps, defaultLabel, isCancellation, StudyInterrupted, StudyTracker, type StudyHooks } from "./common.js";
import { canonicalJson, contentHash } from "./hash.js";
import { physicsContent, referenceCache, type ReferenceCache, type ReferenceRecord } from "./reference.js";
import { checkParts, shardItems, type PartHeader, type Shard } from "./shard.js";
import type { StepperConfig } from "./stability.js";

/**
 * Long-run statistics against an over-refined reference: every run is spun up from the scenario's initial state,
 * then sampled at equal intervals over a window; from the samples come time-mean fields and window means of
 * the energy and its budget. Each stepper's statistics are compared with those of a reference run at a much
 * smaller Δt, and with the spread of an ensemble of reference runs whose initial states differ at round-off
 * level (the noise floor: in a chaotic flow no stepper can be told apart from the reference below it; the
 * use of ensembles to separate predictable from unpredictable differences goes back to Leith 1974, "Theoretical
 * skill of Monte Carlo forecasts", Mon. Wea. Rev. 102, 409–418).
 *
 * Pure: no I/O, no clock of its own (see `StudyHooks`).
 */

/** The statistics that are fields on the cells (layer fields hold every layer, layer-major). */
export const FIELD_STATISTICS = ["meanSurface", "surfaceStd", "meanThickness", "meanKineticEnergy"] as const;
export type FieldStatistic = (typeof FIELD_STATISTICS)[number];
/** Window means of the total energy and of the budget terms (each a number). */
export const ENERGY_STATISTICS = ["meanEnergy", "meanWindPower", "meanDragLoss", "meanViscousLoss", "meanResidual"] as const;
export type EnergyStatistic = (typeof ENERGY_STATISTICS)[number];
export const STATISTICS = [...FIELD_STATISTICS, ...ENERGY_STATISTICS] as const;
export type StatisticName = FieldStatistic | EnergyStatistic;

/** Relative size of the round-off perturbation of the ensemble members' thicknesses (≈ 45 units in the last place). */
export const ENSEMBLE_PERTURBATION = 1e-14;

/**
 * Time-mean fields of one run over the window, on cells: free-surface height η = b + Σ_k h_k [m] and its
 * standard deviation [m]; layer thickness h_k [m] and kinetic energy per unit mass K_k [m²/s²] per layer
 * (K_i = (1/4A_i) Σ_e l_e d_e u_e², the cell kinetic energy of the energy-conserving TRiSK scheme).
 */
export interface StatisticFields {
  meanSurface: Float64Array;
  surfaceStd: Float64Array;
  meanThickness: Float64Array;
  meanKineticEnergy: Float64Array;
}

/**
 * Window means of the energy and of the budget terms, per unit reference density: meanEnergy [m⁵ s⁻²] is the
 * mean of the sampled total energies; the powers [m⁵ s⁻³] are the budget terms integrated over the window (the
 * driver's energy budget) divided by its length. meanResidual is the rate at which the stepper itself creates
 * (> 0) or destroys energy.
 */
export type WindowEnergy = Record<EnergyStatistic, number>;

export interface StatisticsDefinition {
  steppers: readonly StepperConfig[];
  /** Δt list [s]; or `dtFactors`, multiples of the scenario's RK4 gravity-wave limit. Exactly one of the two. */
  dts?: readonly number[];
  dtFactors?: readonly number[];
  /** Simulated time before the window [s] (≥ 0). */
  spinUp: number;
  /** Length of the averaging window [s] (> 0). */
  window: number;
  /** Interval between samples [s]; must divide spinUp and window (default: see `defaultSampleInterval`). */
  sampleEvery?: number;
  /** Reference stepper (default rk4) and its Δt (default half the smaller of the smallest Δt and the RK4 limit). */
  referenceSpec?: StepperConfig;
  referenceDt?: number;
  /** Reference runs in the ensemble (default 1: no noise floor). Member 0 is unperturbed. */
  ensemble?: number;
  /** Seed of the members' perturbations (default 1). */
  seed?: number;
  /** Name of the argument the steppers came from, for error messages (default "--methods"). */
  field?: string;
  limits?: Limits;
}

export interface StatisticsRunPlan {
  /** Δt asked for [s] (before rounding to divide the sample interval). */
  requested: number;
  dt: number;
  stepsPerSample: number;
  spinUpSteps: number;
  /** All steps: spin-up and window. */
  steps: number;
}

/** Everything a study's rows depend on, JSON-safe; shards carry it so that merge can finish the study. */
export interface StatisticsPlan {
  scenario: string;
  spinUp: number;
  window: number;
  sampleEvery: number;
  samples: number;
  rk4DtLimit: number;
  steppers: { label: string; spec: StepperConfig }[];
  dts: StatisticsRunPlan[];
  reference: StatisticsRunPlan & { spec: StepperConfig; label: string };
  ensemble: { members: number; perturbation: number; seed: number };
  nItems: number;
  study: string;
  warnings: string[];
}

export type StatisticValues = Record<StatisticName, number | null>;

export interface StatisticsRow {
  label: string;
  method: string;
  dt: number;
  status: "completed" | "unstable" | "cancelled";
  /** Stepping time of spin-up and window [s], the energy budget's own work left out. */
  wallSeconds: number;
  /** Relative error of each statistic against the reference (see `statisticErrors`, `energyErrors`); null if the run did not complete. */
  errors: StatisticValues;
  /** error ≤ noise floor; null when there is no floor (ensemble of 1) or no error. */
  withinNoise: Record<StatisticName, boolean | null>;
  /** Per-layer errors of the layer fields, each normalised by that layer's reference norm. */
  errorsByLayer: { meanThickness: (number | null)[]; meanKineticEnergy: (number | null)[] };
  /** This run's window means of the energy and budget terms (null if it did not complete). */
  energy: WindowEnergy | null;
  requestedDt: number;
  dtRatioToRk4: number;
  steps: number;
  rhsEvaluations: number;
  matvecs: number;
  unstable?: { step: number; time: number; reason: string };
}

export interface StatisticsReferenceSummary {
  method: string;
  label: string;
  dt: number;
  ensemble: number;
  steps: number;
  /** Window means of member 0 (the unperturbed reference). */
  energy: WindowEnergy;
  /** Area-weighted L2 norm of each reference field (of its departure from rest for mean surface and thickness); the errors' denominators. */
  norms: Record<FieldStatistic, number>;
  /** Cache keys of the members, in order. */
  keys: string[];
}

export interface StatisticsResult {
  kind: "stepwell-statistics";
  status: "completed";
  warnings: string[];
  study: string;
  scenario: string;
  spinUp: number;
  window: number;
  sampleEvery: number;
  samples: number;
  rk4DtLimit: number;
  reference: StatisticsReferenceSummary;
  /** Largest difference between two members' statistics, normalised as the errors are (null for an ensemble of 1). */
  noiseFloor: StatisticValues;
  /** Root mean square of the same pairwise differences (null for an ensemble of 1). */
  noiseFloorRms: StatisticValues;
  rows: StatisticsRow[];
}

export interface StatisticsPart extends PartHeader {
  kind: "stepwell-statistics-part";
  plan: StatisticsPlan;
  reference: StatisticsReferenceSummary;
  noiseFloor: StatisticValues;
  noiseFloorRms: StatisticValues;
  rows: StatisticsRow[];
}

/** What a stopped study (or slice) had finished. */
export interface InterruptedStatistics {
  kind: "stepwell-statistics" | "stepwell-statistics-part";
  status: "interrupted";
  study: string;
  scenario: string;
  shard?: Shard;
  version?: 1;
  nItems: number;
  items: number[];
  warnings: string[];
  plan: StatisticsPlan;
  /** null if a reference run was stopped. */
  reference: StatisticsReferenceSummary | null;
  rows: StatisticsRow[];
}

const ROUNDING_WARNING = 0.01;
const sig = (v: number) => Number(v.toPrecision(4));
/** Sample intervals tried for the default, longest first [s]: 1 day, 12 h, 6 h, 3 h, 1 h, 30 min, 10 min, 1 min. */
const SAMPLE_LADDER = [86400, 43200, 21600, 10800, 3600, 1800, 600, 60];
/** The default sample interval gives at least this many samples in the window. */
export const MIN_DEFAULT_SAMPLES = 20;

/** Is `a` a whole multiple of `b` (to round-off)? Returns the multiple, or null. */
function multipleOf(a: number, b: number): number | null {
  const q = Math.round(a / b);
  return Math.abs(a - q * b) <= 1e-9 * Math.max(Math.abs(a), b) ? q : null;
}

/**
 * The default sample interval: the longest of 1 day, 12 h, 6 h, 3 h, 1 h, 30 min, 10 min and 1 min that divides
 * both the spin-up and the window and gives at least 20 samples; null if none does.
 */
export function defaultSampleInterval(spinUp: number, window: number): number | null {
  for (const s of SAMPLE_LADDER) {
    const n = multipleOf(window, s);
    if (n !== null && n >= MIN_DEFAULT_SAMPLES && multipleOf(spinUp, s) !== null) return s;
  }
  return null;
}

/** Δt rounded down to divide the sample interval; spin-up and window are whole numbers of samples. */
function runPlan(requested: number, sampleEvery: number, spinUpSamples: number, samples: number): StatisticsRunPlan {
  const stepsPerSample = Math.max(1, Math.ceil(sampleEvery / requested - 1e-9));
  const dt = sampleEvery / stepsPerSample;
  return { requested, dt, stepsPerSample, spinUpSteps: spinUpSamples * stepsPerSample, steps: (spinUpSamples + samples) * stepsPerSample };
}

const positiveFinite = (v: unknown): v is number => typeof v === "number" && v > 0 && Number.isFinite(v);

/** Resolve a definition on a scenario: labels, sample times, the Δt actually used, the reference and its ensemble. Checks every bound before work. */
export function planStatistics(built: BuiltScenario, def: StatisticsDefinition): StatisticsPlan {
  const sf = def.field ?? "--methods";
  const limits = def.limits ?? LIMITS;
  if (!def.steppers.length) throw new SolverError("bad-input", `${sf}: give at least one stepper`, sf);
  checkListLength(def.steppers.length, "studyMethods", limits, sf);
  if ((def.dts === undefined) === (def.dtFactors === undefined)) {
    throw new SolverError("bad-input", "--dts: give exactly one of --dts (seconds) and --dt-factors (multiples of the RK4 limit)", "--dts");
  }
  const raw = (def.dts ?? def.dtFactors)!;
  const field = def.dts ? "--dts" : "--dt-factors";
  if (!raw.length || !raw.every(positiveFinite)) throw new SolverError("bad-input", `${field}: must be a comma-separated list of positive numbers`, field);
  checkListLength(raw.length, "studyDts", limits, field);
  if (def.spinUp === undefined || def.spinUp === null) throw new SolverError("bad-input", "--spin-up: give the spin-up time in seconds (0 for none)", "--spin-up");
  if (!(typeof def.spinUp === "number" && def.spinUp >= 0 && Number.isFinite(def.spinUp))) throw new SolverError("bad-input", `--spin-up: must be ≥ 0 s, got ${def.spinUp}`, "--spin-up");
  if (def.window === undefined || def.window === null) throw new SolverError("bad-input", "--window: give the length of the averaging window in seconds", "--window");
  if (!positiveFinite(def.window)) throw new SolverError("bad-input", `--window: must be > 0 s, got ${def.window}`, "--window");
  const ensemble = def.ensemble ?? 1;
  if (!(Number.isInteger(ensemble) && ensemble >= 1)) throw new SolverError("bad-input", `--ensemble: must be a whole number ≥ 1, got ${ensemble}`, "--ensemble");
  checkListLength(ensemble, "ensemble", limits, "--ensemble");
  const seed = def.seed ?? 1;
  if (!Number.isInteger(seed)) throw new SolverError("bad-input", `--seed: must be a whole number, got ${seed}`, "--seed");
  const { spinUp, window } = def;
  let sampleEvery: number;
  if (def.sampleEvery !== undefined) {
    if (!positiveFinite(def.sampleEvery)) throw new SolverError("bad-input", `--sample-every: must be > 0 s, got ${def.sampleEvery}`, "--sample-every");
    sampleEvery = def.sampleEvery;
    if (multipleOf(window, sampleEvery) === null || Math.round(window / sampleEvery) < 1) {
      throw new SolverError("bad-input", `--sample-every: ${sampleEvery} s does not divide --window ${window} s into whole sample intervals`, "--sample-every");
    }
    if (multipleOf(spinUp, sampleEvery) === null) {
      throw new SolverError("bad-input", `--sample-every: ${sampleEvery} s does not divide --spin-up ${spinUp} s into whole sample intervals (every run samples at the same times)`, "--sample-every");
    }
  } else {
    const s = defaultSampleInterval(spinUp, window);
    if (s === null) {
      throw new SolverError("bad-input", `--sample-every: no interval from 1 day down to 1 min divides both --spin-up ${spinUp} s and --window ${window} s ` +
        `with at least ${MIN_DEFAULT_SAMPLES} samples; give --sample-every S`, "--sample-every");
    }
    sampleEvery = s;
  }
  const samples = Math.round(window / sampleEvery);
  const spinUpSamples = Math.round(spinUp / sampleEvery);
  if (samples > limits.outputTimes) {
    throw new SolverError("bad-input", `--sample-every: ${samples} samples in the window is more than the limit of ${limits.outputTimes} output times`, "--sample-every");
  }
  const duration = spinUp + window;
  const durationField = "--window";
  if (def.dts) for (const d of def.dts) checkRunLength(duration, Math.min(d, sampleEvery), limits, durationField, field);
  const probe = new Run(built, { method: "rk4", dt: 1 });
  const limit = probe.rk4DtLimit();
  if (def.dtFactors) for (const f of def.dtFactors) checkRunLength(duration, Math.min(f * limit, sampleEvery), limits, durationField, field);
  const labels = new Set<string>();
  const steppers = def.steppers.map((s, i) => {
    const f = def.steppers.length > 1 || sf === "--steppers" ? `${sf}[${i}]` : sf;
    definitionOf(s, f);
    probe.setStepper({ ...s, dt: 1 } as StepperSpec, f);
    const label = s.label ?? defaultLabel(s);
    if (labels.has(label)) throw new SolverError("bad-input", `${f}: the label "${label}" is used twice; give each stepper its own label`, f);
    labels.add(label);
    const { dt: _dt, ...spec } = s;
    return { label, spec: spec as StepperConfig };
  });
  const warnings: string[] = [];
  const seen = new Set<number>();
  const rounded: string[] = [];
  const dts = raw.map((v) => {
    const requested = def.dts ? v : v * limit;
    if (requested > sampleEvery * (1 + 1e-9)) {
      const sField = def.sampleEvery !== undefined ? "--sample-every" : `${field} (with the default --sample-every)`;
      throw new SolverError("bad-input", `${sField}: the sample interval ${sig(sampleEvery)} s is shorter than Δt = ${sig(requested)} s; every sample must fall on a step, ` +
        "so give a --sample-every of at least the largest Δt that divides --spin-up and --window", def.sampleEvery !== undefined ? "--sample-every" : field);
    }
    const p = runPlan(requested, sampleEvery, spinUpSamples, samples);
    if (seen.has(p.stepsPerSample)) throw new SolverError("bad-input", `${field}: two entries give the same Δt (${sig(p.dt)} s, ${p.stepsPerSample} steps per sample); the list needs distinct Δt`, field);
    seen.add(p.stepsPerSample);
    if (Math.abs(p.dt - requested) > ROUNDING_WARNING * requested) {
      rounded.push(`${def.dts ? `${sig(v)} s` : `${sig(v)} × RK4 limit = ${sig(requested)} s`} → ${sig(p.dt)} s`);
    }
    return p;
  });
  if (rounded.length) warnings.push(`${field}: Δt changed by more than ${ROUNDING_WARNING * 100}% to divide the sample interval (${sig(sampleEvery)} s): ${rounded.join(", ")}`);
  const refSpec: StepperConfig = def.referenceSpec ?? { method: "rk4" };
  definitionOf(refSpec, "--reference-method");
  probe.setStepper({ ...refSpec, dt: 1 } as StepperSpec, "--reference-method");
  if (def.referenceDt !== undefined && !positiveFinite(def.referenceDt)) throw new SolverError("bad-input", `--reference-dt: must be > 0, got ${def.referenceDt}`, "--reference-dt");
  const refRequested = def.referenceDt ?? Math.min(...dts.map((d) => d.dt), limit) / 2;
  checkRunLength(duration, Math.min(refRequested, sampleEvery), limits, durationField,
    def.referenceDt !== undefined ? "--reference-dt" : `${field} (the reference runs at half the smaller of the smallest Δt and the RK4 limit)`);
  const refRun = runPlan(refRequested, sampleEvery, spinUpSamples, samples);
  if (def.referenceDt !== undefined && Math.abs(refRun.dt - def.referenceDt) > ROUNDING_WARNING * def.referenceDt) {
    warnings.push(`--reference-dt: ${sig(def.referenceDt)} s changed to ${sig(refRun.dt)} s to divide the sample interval (${sig(sampleEvery)} s)`);
  }
  const reference = { ...refRun, spec: refSpec, label: refSpec.label ?? defaultLabel(refSpec) };
  const nItems = steppers.length * dts.length;
  const body = {
    scenario: built.scenario.name, spinUp: spinUpSamples * sampleEvery, window: samples * sampleEvery, sampleEvery, samples, rk4DtLimit: limit,
    steppers, dts, reference, ensemble: { members: ensemble, perturbation: ENSEMBLE_PERTURBATION, seed }, nItems,
  };
  const study = contentHash("stepwell-statistics-v1", physicsContent(built), body, built.initial);
  return { ...body, study, warnings };
}

/** Sums over the samples of a window, allocated once per model. The surface variance uses Welford's update. */
export class StatisticsAccumulator {
  readonly nCells: number;
  readonly nLayers: number;
  samples = 0;
  private readonly surfaceMean: Float64Array;
  private readonly surfaceM2: Float64Array;
  private readonly thicknessSum: Float64Array;
  private readonly keSum: Float64Array;
  private readonly eta: Float64Array;
  private readonly ke: Float64Array;

  constructor(readonly model: ShallowWaterModel) {
    const { nLayers: L, nCells: nc } = model.layout;
    this.nCells = nc;
    this.nLayers = L;
    this.surfaceMean = new Float64Array(nc);
    this.surfaceM2 = new Float64Array(nc);
    this.thicknessSum = new Float64Array(L * nc);
    this.keSum = new Float64Array(L * nc);
    this.eta = new Float64Array(nc);
    this.ke = new Float64Array(nc);
  }

  reset(): void {
    this.samples = 0;
    this.surfaceMean.fill(0);
    this.surfaceM2.fill(0);
    this.thicknessSum.fill(0);
    this.keSum.fill(0);
  }

  /**
   * Add the state x as one sample. Mean and variance of η by Welford's update (Welford 1962, "Note on a method
   * for calculating corrected sums of squares and products", Technometrics 4, 419–420), which does not lose the
   * variance to cancellation as Σx² − n x̄² would.
   */
  add(x: Float64Array): void {
    const { nCells: nc, nLayers: L } = this;
    const m = this.model.mesh;
    const uOffset = this.model.layout.uOffset;
    this.samples++;
    const n = this.samples;
    surfaceHeight(this.eta, this.model, x);
    for (let i = 0; i < nc; i++) {
      const v = this.eta[i];
      const d = v - this.surfaceMean[i];
      this.surfaceMean[i] += d / n;
      this.surfaceM2[i] += d * (v - this.surfaceMean[i]);
    }
    for (let q = 0; q < L * nc; q++) this.thicknessSum[q] += x[q];
    for (let k = 0; k < L; k++) {
      kineticEnergy(this.ke, m, x, uOffset + k * this.model.layout.nEdges);
      const off = k * nc;
      for (let i = 0; i < nc; i++) this.keSum[off + i] += this.ke[i];
    }
  }

  /** The time-mean fields of the samples so far (new arrays); the standard deviation is the population one (÷ n). */
  finish(): StatisticFields {
    const n = this.samples;
    if (n < 1) throw new Error("StatisticsAccumulator.finish: no samples");
    return {
      meanSurface: Float64Array.from(this.surfaceMean),
      surfaceStd: this.surfaceM2.map((v) => Math.sqrt(Math.max(v, 0) / n)),
      meanThickness: this.thicknessSum.map((v) => v / n),
      meanKineticEnergy: this.keSum.map((v) => v / n),
    };
  }
}

/** The fields a run at rest would give: the resting surface and thicknesses, no variability, no motion. */
export function restStatistics(model: ShallowWaterModel): StatisticFields {
  const { nLayers: L, nCells: nc } = model.layout;
  const rest = model.restState();
  const eta = new Float64Array(nc);
  surfaceHeight(eta, model, rest);
  return { meanSurface: eta, surfaceStd: new Float64Array(nc), meanThickness: rest.slice(0, L * nc), meanKineticEnergy: new Float64Array(L * nc) };
}

/** Σ_k Σ_i A_i (a − b)² over cells, layer by layer (a field of L·nCells values has L layers). */
function layerSquares(area: Float64Array, a: Float64Array, b: Float64Array | null): number[] {
  const nc = area.length;
  const L = a.length / nc;
  const out = new Array<number>(L).fill(0);
  for (let k = 0; k < L; k++) {
    let s = 0;
    for (let i = 0; i < nc; i++) {
      const d = a[k * nc + i] - (b ? b[k * nc + i] : 0);
      s += area[i] * d * d;
    }
    out[k] = s;
  }
  return out;
}

const nullValues = (): StatisticValues => Object.fromEntries(STATISTICS.map((s) => [s, null])) as StatisticValues;
const ratio = (d: number, r: number) => (r > 0 ? Math.sqrt(d / r) : Math.sqrt(d));
const sum = (a: number[]) => a.reduce((s, v) => s + v, 0);

/**
 * Relative error of each field statistic against the reference:
 *   e_S = ‖S − S_ref‖ / ‖S_ref − S_rest‖,  ‖a‖² = Σ_k Σ_i A_i a_{k,i}²  (A_i the cell area),
 * with S_rest the resting surface and thicknesses for meanSurface and meanThickness and 0 for surfaceStd and
 * meanKineticEnergy (the area-weighted discrete L2 norm: common practice, no source). If the reference norm is
 * 0 the absolute norm is returned. Per-layer errors use each layer's own reference norm.
 */
export function statisticErrors(model: ShallowWaterModel, s: StatisticFields, ref: StatisticFields, rest: StatisticFields = restStatistics(model)):
  { errors: Record<FieldStatistic, number>; byLayer: { meanThickness: number[]; meanKineticEnergy: number[] }; norms: Record<FieldStatistic, number> } {
  const area = model.mesh.cellArea;
  const errors = {} as Record<FieldStatistic, number>;
  const norms = {} as Record<FieldStatistic, number>;
  const byLayer = { meanThickness: [] as number[], meanKineticEnergy: [] as number[] };
  for (const name of FIELD_STATISTICS) {
    const d = layerSquares(area, s[name], ref[name]);
    const r = layerSquares(area, ref[name], rest[name]);
    errors[name] = ratio(sum(d), sum(r));
    norms[name] = Math.sqrt(sum(r));
    if (name === "meanThickness" || name === "meanKineticEnergy") byLayer[name] = d.map((v, k) => ratio(v, r[k]));
  }
  return { errors, byLayer, norms };
}

/** The scales the energy errors are relative to: |E_ref| for the energy, the largest budget power of the reference for the budget terms. */
function energyScales(ref: WindowEnergy): Record<EnergyStatistic, number> {
  const power = Math.max(Math.abs(ref.meanWindPower), Math.abs(ref.meanDragLoss), Math.abs(ref.meanViscousLoss));
  return { meanEnergy: Math.abs(ref.meanEnergy), meanWindPower: power, meanDragLoss: power, meanViscousLoss: power, meanResidual: power };
}

/** |a − b| / scale for each energy statistic (the absolute difference where the scale is 0). */
function energyDifferences(a: WindowEnergy, b: WindowEnergy, ref: WindowEnergy): Record<EnergyStatistic, number> {
  const scale = energyScales(ref);
  return Object.fromEntries(ENERGY_STATISTICS.map((k) => {
    const d = Math.abs(a[k] - b[k]);
    return [k, scale[k] > 0 ? d / scale[k] : d];
  })) as Record<EnergyStatistic, number>;
}

/**
 * Relative error of the window-mean energy and budget terms: |E − E_ref| / |E_ref| for the energy, and for each
 * budget term |P − P_ref| / max(|P_wind|, |P_drag|, |P_viscous|) of the reference (the residual of a good
 * reference is near 0, so it cannot be its own scale); the absolute difference when the scale is 0.
 */
export function energyErrors(e: WindowEnergy, ref: WindowEnergy): Record<EnergyStatistic, number> {
  return energyDifferences(e, ref, ref);
}

/** All errors of one run's statistics against the reference's (the reference's own norms normalise them). */
export function allErrors(model: ShallowWaterModel, s: StatisticFields, e: WindowEnergy, ref: StatisticFields, refE: WindowEnergy, rest?: StatisticFields) {
  const f = statisticErrors(model, s, ref, rest);
  return { errors: { ...f.errors, ...energyErrors(e, refE) } as Record<StatisticName, number>, byLayer: f.byLayer, norms: f.norms };
}

/**
 * The noise floor of an ensemble: for each statistic, the largest and the root-mean-square difference between
 * two members over all pairs, each difference normalised as the errors are, by member 0 (the reference):
 *   floor_S = max_{a<b} ‖S_a − S_b‖ / ‖S_0 − S_rest‖   (and likewise |E_a − E_b| / scale for the energies).
 * A stepper whose statistics are as close to the reference as two reference members are to each other cannot
 * be told apart from it. With fewer than two members there is no floor (null).
 */
export function noiseFloor(model: ShallowWaterModel, members: readonly { fields: StatisticFields; energy: WindowEnergy }[], rest: StatisticFields = restStatistics(model)):
  { max: StatisticValues; rms: StatisticValues } {
  if (members.length < 2) return { max: nullValues(), rms: nullValues() };
  const area = model.mesh.cellArea;
  const ref = members[0];
  const norms = Object.fromEntries(FIELD_STATISTICS.map((s) => [s, Math.sqrt(sum(layerSquares(area, ref.fields[s], rest[s])))])) as Record<FieldStatistic, number>;
  const max = Object.fromEntries(STATISTICS.map((s) => [s, 0])) as Record<StatisticName, number>;
  const sq = Object.fromEntries(STATISTICS.map((s) => [s, 0])) as Record<StatisticName, number>;
  let pairs = 0;
  for (let a = 0; a < members.length; a++) {
    for (let b = a + 1; b < members.length; b++) {
      pairs++;
      const add = (s: StatisticName, v: number) => { max[s] = Math.max(max[s], v); sq[s] += v * v; };
      for (const s of FIELD_STATISTICS) add(s, ratio(sum(layerSquares(area, members[a].fields[s], members[b].fields[s])), norms[s] ** 2));
      const e = energyDifferences(members[a].energy, members[b].energy, ref.energy);
      for (const s of ENERGY_STATISTICS) add(s, e[s]);
    }
  }
  const rms = Object.fromEntries(STATISTICS.map((s) => [s, Math.sqrt(sq[s] / pairs)])) as StatisticValues;
  return { max: { ...max }, rms };
}

/** Pack fields and window means into one array (a reference record's `state`). */
export function packStatistics(f: StatisticFields, e: WindowEnergy): Float64Array {
  const parts = [f.meanSurface, f.surfaceStd, f.meanThickness, f.meanKineticEnergy];
  const out = new Float64Array(parts.reduce((s, p) => s + p.length, 0) + ENERGY_STATISTICS.length);
  let o = 0;
  for (const p of parts) { out.set(p, o); o += p.length; }
  ENERGY_STATISTICS.forEach((k, j) => { out[o + j] = e[k]; });
  return out;
}

export function unpackStatistics(a: Float64Array, nCells: number, nLayers: number): { fields: StatisticFields; energy: WindowEnergy } {
  const nc = nCells;
  const L = nLayers;
  if (a.length !== (2 + 2 * L) * nc + ENERGY_STATISTICS.length) throw new Error(`unpackStatistics: ${a.length} values do not fit ${nc} cells and ${L} layers`);
  let o = 0;
  const take = (n: number) => { const v = a.slice(o, o + n); o += n; return v; };
  const fields = { meanSurface: take(nc), surfaceStd: take(nc), meanThickness: take(L * nc), meanKineticEnergy: take(L * nc) };
  const energy = Object.fromEntries(ENERGY_STATISTICS.map((k, j) => [k, a[o + j]])) as WindowEnergy;
  return { fields, energy };
}

/**
 * The initial state of ensemble member m: member 0 is the scenario's own; member m ≥ 1 has every layer
 * thickness multiplied by 1 + ε r with r uniform in [−1, 1) from a seeded generator (mulberry32, as the meshes'
 * jitter), ε = `perturbation` — a difference at round-off level, reproducible from (seed, m).
 */
export function memberInitialState(initial: Float64Array, nThickness: number, member: number, perturbation: number, seed: number): Float64Array {
  const x = Float64Array.from(initial);
  if (member === 0) return x;
  const rnd = seededRandom((Math.imul(seed, 0x9e3779b1) + member) >>> 0);
  for (let q = 0; q < nThickness; q++) x[q] *= 1 + perturbation * (2 * rnd() - 1);
  return x;
}

/** What one spun-up and sampled run gives. */
export interface WindowRun {
  status: "completed" | "unstable";
  fields: StatisticFields | null;
  energy: WindowEnergy | null;
  wallSeconds: number;
  steps: number;
  rhsEvaluations: number;
  matvecs: number;
  unstable: Run["unstable"];
}

/**
 * Spin a run up and sample it over the window (the run starts from its current state, which the caller set).
 * The energy budget is tracked over the window only; its cost is left out of the wall time.
 */
export function sampleWindow(run: Run, p: StatisticsRunPlan, acc: StatisticsAccumulator, samples: number, tracker: StudyTracker, what: string): WindowRun {
  const clock = tracker.clock;
  const st0 = { ...run.stepper.stats };
  acc.reset();
  run.trackEnergyBudget(false);
  const t0 = clock();
  let budgetSeconds = 0;
  const fail = (): WindowRun => {
    const st = run.stepper.stats;
    return { status: "unstable", fields: null, energy: null, wallSeconds: clock() - t0 - budgetSeconds, steps: run.steps, rhsEvaluations: st.rhsEvaluations - st0.rhsEvaluations, matvecs: st.matvecs - st0.matvecs, unstable: run.unstable };
  };
  const total = p.steps;
  const chunk = Math.max(1, Math.min(p.stepsPerSample, Math.ceil(total / 100)));
  while (run.steps < p.spinUpSteps) {
    if (!advanceSteps(run, Math.min(chunk, p.spinUpSteps - run.steps), tracker)) return fail();
    tracker.report(what, run.steps / total);
  }
  const budget = run.trackEnergyBudget(true)!;
  budget.clock = clock;
  let energySum = 0;
  for (let j = 1; j <= samples; j++) {
    const end = p.spinUpSteps + j * p.stepsPerSample;
    while (run.steps < end) {
      if (!advanceSteps(run, Math.min(chunk, end - run.steps), tracker)) { budgetSeconds = budget.seconds; run.trackEnergyBudget(false); return fail(); }
      tracker.report(what, run.steps / total);
    }
    acc.add(run.state);
    budget.record(run.state);
    energySum += budget.series.energy[budget.series.energy.length - 1];
  }
  const s = budget.summary(run.state);
  budgetSeconds = budget.seconds;
  run.trackEnergyBudget(false);
  const window = samples * p.stepsPerSample * p.dt;
  const st = run.stepper.stats;
  return {
    status: "completed", fields: acc.finish(),
    energy: {
      meanEnergy: energySum / samples, meanWindPower: s.windWork / window, meanDragLoss: s.dragLoss / window,
      meanViscousLoss: s.viscousLoss / window, meanResidual: s.residual / window,
    },
    wallSeconds: clock() - t0 - budgetSeconds, steps: run.steps,
    rhsEvaluations: st.rhsEvaluations - st0.rhsEvaluations, matvecs: st.matvecs - st0.matvecs, unstable: null,
  };
}

/** Cache key of one ensemble member's statistics (physics, stepper, Δt, sample times, perturbation, initial state, solver identity). */
export function memberKey(built: BuiltScenario, plan: StatisticsPlan, member: number, solver = ""): string {
  const { label: _label, ...spec } = plan.reference.spec;
  const r = plan.reference;
  const perturbation = member === 0 ? null : { member, size: plan.ensemble.perturbation, seed: plan.ensemble.seed };
  return contentHash("stepwell-statistics-member-v1", solver, physicsContent(built), spec, r.dt, r.spinUpSteps, r.steps, plan.sampleEvery, perturbation, built.initial);
}

export interface ReferenceMember {
  key: string;
  fields: StatisticFields;
  energy: WindowEnergy;
}

/**
 * The statistics of every ensemble member, each from the cache or computed (and stored). They go through the
 * same cache as the sweep's reference runs: a `ReferenceRecord` whose `state` holds the packed statistics
 * (`packStatistics`) and whose `floor` is 0 (an ensemble, not a Δt halving, measures these references).
 */
export function referenceMembers(built: BuiltScenario, plan: StatisticsPlan, cache: ReferenceCache, tracker: StudyTracker, solver = ""): ReferenceMember[] {
  const out: ReferenceMember[] = [];
  const work: MemberWork = { run: null, acc: null };
  for (let m = 0; m < plan.ensemble.members; m++) {
    const hit = cachedMember(built, plan, cache, m, solver);
    if (hit) {
      out.push(hit);
      tracker.done++;
      continue;
    }
    const record = computeMember(built, plan, m, tracker, solver, work);
    cache.set(record.key, record);
    out.push({ key: record.key, ...unpackStatistics(record.state, built.model.layout.nCells, built.model.layout.nLayers) });
    tracker.done++;
  }
  return out;
}

/** Member m from the cache, or null when it is not there (or not a statistics record of this mesh). */
export function cachedMember(built: BuiltScenario, plan: StatisticsPlan, cache: ReferenceCache, m: number, solver = ""): ReferenceMember | null {
  const { nLayers: L, nCells: nc } = built.model.layout;
  const key = memberKey(built, plan, m, solver);
  const hit = cache.get(key);
  if (!hit || hit.state.length !== (2 + 2 * L) * nc + ENERGY_STATISTICS.length) return null;
  return { key, ...unpackStatistics(hit.state, nc, L) };
}

/** A run and an accumulator reused by one caller for the members it computes. */
export interface MemberWork { run: Run | null; acc: StatisticsAccumulator | null }

/** Member m computed: spun up from its (perturbed) initial state and sampled; a record for the cache. */
export function computeMember(built: BuiltScenario, plan: StatisticsPlan, m: number, tracker: StudyTracker, solver = "",
  work: MemberWork = { run: null, acc: null }): ReferenceRecord {
  const { nLayers: L, nCells: nc } = built.model.layout;
  const r = plan.reference;
  const key = memberKey(built, plan, m, solver);
  tracker.checkpoint();
  const initial = memberInitialState(built.initial, L * nc, m, plan.ensemble.perturbation, plan.ensemble.seed);
  const run = (work.run ??= new Run({ ...built, initial }, { ...r.spec, dt: r.dt } as StepperSpec));
  const acc = (work.acc ??= new StatisticsAccumulator(built.model));
  // a fresh stepper for every member: nothing a stepper carries between steps passes from one member to the next
  run.setStepper({ ...r.spec, dt: r.dt } as StepperSpec, "--reference-method");
  run.reset();
  run.state.set(initial);
  run.lastGood.set(initial);
  const what = `reference ${r.label}${plan.ensemble.members > 1 ? ` member ${m + 1}/${plan.ensemble.members}` : ""}`;
  const w = sampleWindow(run, r, acc, plan.samples, tracker, what);
  if (w.status !== "completed") {
    const u = w.unstable!;
    throw new SolverError("bad-input", `--reference-dt: the ${what} (Δt = ${sig(r.dt)} s) became unstable at step ${u.step}: ${u.reason}; choose a smaller reference Δt`, "--reference-dt");
  }
  return {
    key, solver, method: r.spec.method, label: r.label, spec: r.spec, dt: r.dt, steps: r.steps, duration: r.steps * r.dt,
    floor: { surface: 0, thickness: 0, velocity: 0 }, order: run.stepper.order, state: packStatistics(w.fields!, w.energy!),
  };
}

const finiteOr = (v: number): number | null => (Number.isFinite(v) ? v : null);

/** Hook for the fields themselves (e.g. a NetCDF file): called for the reference (label null) and for each completed row. */
export type FieldsHook = (row: { label: string; dt: number } | null, fields: StatisticFields, energy: WindowEnergy) => void;

/** Run the work items of a plan (item k = stepper ⌊k / nΔt⌋ at Δt k mod nΔt). Each run starts from the scenario's initial state, so any subset gives the same rows. */
export function statisticsRows(built: BuiltScenario, plan: StatisticsPlan, ref: ReferenceMember, floor: StatisticValues, items: Iterable<number>,
  tracker: StudyTracker, rows: StatisticsRow[] = [], onFields?: FieldsHook): StatisticsRow[] {
  const run = new Run(built, { ...plan.steppers[0].spec, dt: plan.dts[0].dt } as StepperSpec);
  const acc = new StatisticsAccumulator(built.model);
  const rest = restStatistics(built.model);
  for (const k of items) {
    const s = plan.steppers[Math.floor(k / plan.dts.length)];
    const d = plan.dts[k % plan.dts.length];
    tracker.checkpoint();
    const item = `${s.label} Δt = ${sig(d.dt)} s`;
    tracker.report(item);
    run.setStepper({ ...s.spec, dt: d.dt } as StepperSpec, "--methods");
    run.reset();
    const w = sampleWindow(run, d, acc, plan.samples, tracker, item);
    const ok = w.status === "completed";
    const e = ok ? allErrors(built.model, w.fields!, w.energy!, ref.fields, ref.energy, rest) : null;
    const errors = nullValues();
    const withinNoise = nullValues() as Record<StatisticName, boolean | null>;
    for (const name of STATISTICS) {
      errors[name] = e ? finiteOr(e.errors[name]) : null;
      const f = floor[name];
      const v = errors[name];
      withinNoise[name] = f === null ? null : v === null ? false : v <= f;
    }
    if (ok && onFields) onFields({ label: s.label, dt: d.dt }, w.fields!, w.energy!);
    rows.push({
      label: s.label, method: s.spec.method, dt: d.dt, status: w.status, wallSeconds: w.wallSeconds, errors, withinNoise,
      errorsByLayer: e ? { meanThickness: e.byLayer.meanThickness.map(finiteOr), meanKineticEnergy: e.byLayer.meanKineticEnergy.map(finiteOr) } : { meanThickness: [], meanKineticEnergy: [] },
      energy: w.energy, requestedDt: d.requested, dtRatioToRk4: d.dt / plan.rk4DtLimit, steps: w.steps,
      rhsEvaluations: w.rhsEvaluations, matvecs: w.matvecs,
      ...(w.unstable ? { unstable: { step: w.unstable.step, time: w.unstable.time, reason: w.unstable.reason } } : {}),
    });
    tracker.done++;
  }
  return rows;
}

export function summarizeStatisticsReference(built: BuiltScenario, plan: StatisticsPlan, members: readonly ReferenceMember[]): StatisticsReferenceSummary {
  const norms = statisticErrors(built.model, members[0].fields, members[0].fields).norms;
  const r = plan.reference;
  return { method: r.spec.method, label: r.label, dt: r.dt, ensemble: plan.ensemble.members, steps: r.steps, energy: { ...members[0].energy }, norms, keys: members.map((m) => m.key) };
}

/** The result from complete rows (in item order). Pure; `merge` calls the same function. */
export function finishStatistics(plan: StatisticsPlan, reference: StatisticsReferenceSummary, floor: { max: StatisticValues; rms: StatisticValues }, rows: StatisticsRow[]): StatisticsResult {
  return {
    kind: "stepwell-statistics", status: "completed", warnings: [...plan.warnings], study: plan.study, scenario: plan.scenario,
    spinUp: plan.spinUp, window: plan.window, sampleEvery: plan.sampleEvery, samples: plan.samples, rk4DtLimit: plan.rk4DtLimit,
    reference, noiseFloor: floor.max, noiseFloorRms: floor.rms, rows,
  };
}

export interface StatisticsRunOptions extends StudyHooks {
  cache?: ReferenceCache;
  shard?: Shard;
  /** Identity of the solver code, part of the members' cache keys. */
  solver?: string;
  onFields?: FieldsHook;
}

/**
 * A whole statistics study (or one slice of it, as a partial result for `mergeStatisticsParts`). Stopped through
 * the hooks, it throws `StudyInterrupted<InterruptedStatistics>`.
 */
export function runStatistics(built: BuiltScenario, def: StatisticsDefinition, o: StatisticsRunOptions & { shard: Shard }): StatisticsPart;
export function runStatistics(built: BuiltScenario, def: StatisticsDefinition, o?: StatisticsRunOptions): StatisticsResult;
export function runStatistics(built: BuiltScenario, def: StatisticsDefinition, o: StatisticsRunOptions = {}): StatisticsResult | StatisticsPart {
  const plan = planStatistics(built, def);
  const items = o.shard ? shardItems(plan.nItems, o.shard) : Array.from({ length: plan.nItems }, (_, k) => k);
  const tracker = new StudyTracker(o, items.length + plan.ensemble.members);
  for (const w of plan.warnings) tracker.warn(w);
  const rows: StatisticsRow[] = [];
  let reference: StatisticsReferenceSummary | null = null;
  let floor: { max: StatisticValues; rms: StatisticValues };
  try {
    const members = referenceMembers(built, plan, o.cache ?? referenceCache, tracker, o.solver);
    reference = summarizeStatisticsReference(built, plan, members);
    floor = noiseFloor(built.model, members);
    o.onFields?.(null, members[0].fields, members[0].energy);
    statisticsRows(built, plan, members[0], floor.max, items, tracker, rows, o.onFields);
  } catch (e) {
    if (!isCancellation(e)) throw e;
    const partial: InterruptedStatistics = {
      kind: o.shard ? "stepwell-statistics-part" : "stepwell-statistics", status: "interrupted", study: plan.study, scenario: plan.scenario,
      ...(o.shard ? { shard: o.shard, version: 1 as const } : {}), nItems: plan.nItems, items: items.slice(0, rows.length), warnings: plan.warnings, plan,
      reference, rows,
    };
    throw new StudyInterrupted(partial, rows.length, items.length);
  }
  tracker.report("done");
  if (!o.shard) return finishStatistics(plan, reference, floor, rows);
  return {
    kind: "stepwell-statistics-part", version: 1, study: plan.study, shard: o.shard, nItems: plan.nItems, items, plan, reference,
    noiseFloor: floor.max, noiseFloorRms: floor.rms, rows,
  };
}

/** Join the slices of a sharded statistics study into exactly the result the unsharded study gives. */
export function mergeStatisticsParts(parts: readonly StatisticsPart[]): StatisticsResult {
  const sorted = checkParts(parts, "stepwell-statistics-part");
  const byItem = new Map<number, StatisticsRow>();
  for (const p of sorted) {
    if (p.rows.length !== p.items.length) throw new SolverError("bad-input", `PARTS: slice ${p.shard.index}/${p.shard.count} has ${p.rows.length} rows for ${p.items.length} items`, "PARTS");
    p.items.forEach((k, j) => byItem.set(k, p.rows[j]));
  }
  const refText = canonicalJson([sorted[0].reference, sorted[0].noiseFloor, sorted[0].noiseFloorRms]);
  for (const p of sorted) {
    if (canonicalJson([p.reference, p.noiseFloor, p.noiseFloorRms]) !== refText) {
      throw new SolverError("bad-input", `PARTS: slice ${p.shard.index}/${p.shard.count} used a different reference ensemble`, "PARTS");
    }
  }
  const rows = Array.from({ length: sorted[0].nItems }, (_, k) => byItem.get(k)!);
  return finishStatistics(sorted[0].plan, sorted[0].reference, { max: sorted[0].noiseFloor, rms: sorted[0].noiseFloorRms }, rows);
}
