/** What the driver, the studies and the worker see of a running stepper. */
import type { StepperDefinition, StepperInstance } from "./interface.js";

export interface StepStats {
  steps: number;
  /** Full tendency evaluations (or their equivalent), as counted by the problem. */
  rhsEvaluations: number;
  /** Linear-operator applications, including those inside φ-actions and Jacobian-vector products. */
  matvecs: number;
  /** Global inner products (the communication cost of a method on many processors). */
  innerProducts: number;
  /** φ-action calls. */
  phiActions: number;
}

/** A stepper definition instantiated on a problem, with its work counted since creation. */
export interface Stepper {
  /** Method name as written in scenario files, e.g. "rk4". */
  readonly method: string;
  /** A human label with the options, e.g. "etdrk4 (linear=modes:1, backend=krylov)". */
  readonly label: string;
  /** Order of accuracy of this configuration. */
  readonly order: number;
  readonly stats: StepStats;
  /** Advance x in place from t to t + dt. Allocates nothing. */
  step(x: Float64Array, t: number, dt: number): void;
  /** Optional note a user must see (e.g. "order reduced with a fixed linear part"). */
  readonly note?: string;
  readonly definition: StepperDefinition;
  /** What `create` returned (built-ins may carry extra read-only fields, e.g. the split-explicit sub-step count). */
  readonly instance: StepperInstance;
}
