/**
 * What crosses the worker boundary. Plain data only; buffers named here are transferred, not copied.
 * The app imports these types (and `import type` of solver types) but never the solver itself.
 */
import type { Budget, CourantNumbers } from "../solver/diagnostics/budget.js";
import type { EnergyBudgetSummary } from "../solver/diagnostics/energyBudget.js";
import type { CellOutlines, FieldInfo, FieldKind } from "../solver/diagnostics/fields.js";
import type { RunDescription, UnstableReport } from "../solver/driver/run.js";
import type { Scenario, StepperSpec } from "../solver/scenario/schema.js";
import type { ChoiceConflict, OptionChoice, OptionDescription, OptionValue } from "../solver/time/optionChoices.js";

export type { Budget, CourantNumbers, CellOutlines, FieldInfo, FieldKind, RunDescription, UnstableReport, Scenario, StepperSpec };
export type { ChoiceConflict, OptionChoice, OptionDescription, OptionValue };

/** A failure as it reaches the UI: the solver's code, the offending field path if any, and a message. */
export interface WorkerFailure {
  readonly name: "SolverError" | "WorkerError";
  readonly code: string;
  readonly field?: string;
  readonly message: string;
}

export interface MethodSummary {
  name: string;
  family: string;
  order: number;
  description: string;
  options: string[];
  /** How to offer each option (kind, choices, default, help) for the loaded scenario's layer count. */
  choices: OptionDescription[];
  imaginaryAxisBound?: number;
  baroclinicAxisBound?: number;
}

/** Which field the map shows. */
export interface MapView {
  kind: FieldKind;
  layer: number;
}

/** One map frame: a value per cell (the buffer is transferred and should be handed back for reuse). */
export interface Snapshot {
  values: Float32Array;
  kind: FieldKind;
  layer: number;
  min: number;
  max: number;
  step: number;
  time: number;
  /** True when the buffer was one the UI handed back (no allocation for this snapshot). */
  recycled: boolean;
}

export interface StepperCounters {
  steps: number;
  rhsEvaluations: number;
  matvecs: number;
  innerProducts: number;
}

/** Where a blow-up happened, with the cell to mark on the map. */
export interface UnstableInfo extends UnstableReport {
  /** The offending cell, or the first cell of the offending edge. */
  cell: number;
}

/** Diagnostics of one chunk of steps, sent every chunk. */
export interface ChunkReport {
  step: number;
  /** Simulated time [s]. */
  time: number;
  budget: Budget;
  courant: CourantNumbers;
  /** Counters of the current stepper since it was built. */
  counters: StepperCounters;
  /** Steps done in this chunk and the worker's wall time for them [ms]. */
  chunkSteps: number;
  chunkMs: number;
  /** Part of chunkMs spent on the energy budget (one extra tendency evaluation per step) [ms]. */
  budgetMs: number;
  unstable: UnstableInfo | null;
  snapshot: Snapshot;
  /**
   * Energy budget since the scenario was loaded or reset (change, wind work, drag and viscous losses, residual;
   * m⁵ s⁻²), and the energy drift or why it is not defined (null with a reason for forced or damped runs).
   */
  energyBudget: EnergyBudgetSummary | null;
  energyDrift: { value: number | null; reason?: string };
  /**
   * A copy of the state after this chunk, sent at most about once a second and after every change of stepper,
   * so that the page can restart a stopped worker from it (see `Checkpoint`).
   */
  checkpoint?: Checkpoint;
}

/** The last good state the page keeps, to restart a worker that had to be stopped. */
export interface Checkpoint {
  state: Float64Array;
  time: number;
  step: number;
  spec: StepperSpec;
  /** What a stepper that carries values between steps returned from `saveState`. */
  stepperState?: Float64Array;
}

/** A user module loaded from the page's editor. */
export interface LoadedModule {
  key: string;
  name: string;
  order: number;
  description: string;
  /** The Blob URL the code was imported from (faults are located in it). */
  origin: string;
  choices: OptionDescription[];
}

export interface StepperInfo {
  spec: StepperSpec;
  label: string;
  note?: string;
}

export interface InitResult {
  description: RunDescription;
  scenario: Scenario;
  stepper: StepperInfo;
  methods: MethodSummary[];
  fields: FieldInfo[];
  outlines: CellOutlines;
  report: ChunkReport;
}
