/** What every time stepper sees and exposes (numerics reference §5–6). */

/** An ODE x' = F(x, t) on a flat state vector. */
export interface OdeProblem {
  readonly n: number;
  /** out = F(x, t); must not allocate. */
  tendency(out: Float64Array, x: Float64Array, t: number): void;
}

export interface StepStats {
  steps: number;
  /** Full tendency evaluations (or their equivalent). */
  rhsEvaluations: number;
  /** Linear-operator applications, including those inside φ-actions and Jacobian-vector products. */
  matvecs: number;
  /** Global inner products (the communication cost of a method on many processors). */
  innerProducts: number;
}

export interface Stepper {
  /** Method name as written in scenario files, e.g. "rk4". */
  readonly method: string;
  /** A human label with the options, e.g. "etdrk4 (linear=modes:1, backend=krylov)". */
  readonly label: string;
  /** Nominal order of accuracy. */
  readonly order: number;
  readonly stats: StepStats;
  /** Advance x in place from t to t + dt. Allocates nothing. */
  step(x: Float64Array, t: number, dt: number): void;
  /** Optional note a user must see (e.g. "order reduced with a fixed linear part"). */
  readonly note?: string;
}

export function emptyStats(): StepStats {
  return { steps: 0, rhsEvaluations: 0, matvecs: 0, innerProducts: 0 };
}

/** y += a x (BLAS argument order). */
export function axpy(a: number, x: Float64Array, y: Float64Array): void {
  for (let i = 0, n = y.length; i < n; i++) y[i] += a * x[i];
}
